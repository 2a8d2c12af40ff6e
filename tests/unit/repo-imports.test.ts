import { readdirSync, readFileSync } from 'node:fs'
import { dirname, join, relative, resolve } from 'node:path'
import { describe, expect, it } from 'vitest'

// The verdict path reads in one direction: services decide (the engine, then the judge) and call
// repos to read and store. A repo that imported a service or the judge could decide again inside a
// query, out of sight of the service that owns the flow; this test keeps that from creeping back.
const SERVER = resolve(import.meta.dirname, '../../server')
const REPOS = join(SERVER, 'repos')
const FORBIDDEN = ['verdict', 'services'].map((d) => join(SERVER, d))

/** Every module specifier a source file names: static imports and re-exports (type-only too), dynamic imports. */
function specifiers(src: string): string[] {
  const found = [
    ...src.matchAll(/\b(?:import|export)\b[^'"`;]*?\bfrom\s*['"]([^'"]+)['"]/g),
    ...src.matchAll(/\bimport\s*['"]([^'"]+)['"]/g),
    ...src.matchAll(/\bimport\s*\(\s*['"]([^'"]+)['"]\s*\)/g),
  ]
  return found.map((m) => m[1]!)
}

/** Where a specifier points inside the project, or null for a package. `~~/` and `~/` are the root (srcDir '.'). */
function target(fromFile: string, spec: string): string | null {
  if (spec.startsWith('.')) return resolve(dirname(fromFile), spec)
  const alias = /^(?:~~|~|@@|@)\/(.*)$/.exec(spec)
  return alias ? resolve(SERVER, '..', alias[1]!) : null
}

const repoFiles = readdirSync(REPOS, { recursive: true, encoding: 'utf8' }).filter((f) => f.endsWith('.ts'))

describe('repos depend on nothing above them', () => {
  it('reads the imports of every repo (the check below is not empty)', () => {
    expect(repoFiles.length).toBeGreaterThan(8)
    const results = readFileSync(join(REPOS, 'results.ts'), 'utf8')
    expect(specifiers(results)).toContain('../analysis/index.ts')
    expect(specifiers("import type { X } from '../services/a'\nexport { y } from \"../verdict/b\"\nawait import('../services/c')")).toEqual(['../services/a', '../verdict/b', '../services/c'])
  })

  it('no file in server/repos imports from server/verdict or server/services', () => {
    const offending: string[] = []
    for (const f of repoFiles) {
      const file = join(REPOS, f)
      for (const spec of specifiers(readFileSync(file, 'utf8'))) {
        const to = target(file, spec)
        if (to && FORBIDDEN.some((d) => to === d || to.startsWith(d + '/'))) offending.push(`${relative(SERVER, file)} → ${spec}`)
      }
    }
    expect(offending).toEqual([])
  })
})
