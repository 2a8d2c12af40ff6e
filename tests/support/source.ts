/** The project's own source, for the tests that read it (where SQL, audit writes and errors may live). */
import { existsSync, readdirSync, readFileSync } from 'node:fs'
import { join, relative, resolve } from 'node:path'

export const ROOT = resolve(import.meta.dirname, '../..')

/** Repository-relative paths of the files under these folders whose names match (folders that do not exist are skipped). */
export function sourceFiles(dirs: readonly string[], name: RegExp = /\.(?:ts|vue)$/): string[] {
  return dirs
    .filter((d) => existsSync(join(ROOT, d)))
    .flatMap((d) =>
      readdirSync(join(ROOT, d), { recursive: true, encoding: 'utf8' })
        .filter((f) => name.test(f))
        .map((f) => relative(ROOT, join(ROOT, d, f))),
    )
}

/** A source file's text, by its repository-relative path. */
export function readSource(path: string): string {
  return readFileSync(join(ROOT, path), 'utf8')
}
