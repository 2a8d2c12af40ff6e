import { randomBytes } from 'node:crypto'
import { appendFileSync, existsSync, readFileSync, writeFileSync } from 'node:fs'

/**
 * Loads KEY=VALUE lines of a git-ignored .env into process.env (existing variables win), and
 * generates NUXT_SESSION_PASSWORD into it on first start. The secret is never printed.
 */
export function loadEnvFile(path: string): void {
  if (existsSync(path)) {
    for (const line of readFileSync(path, 'utf8').split(/\r?\n/)) {
      const m = /^\s*([A-Za-z_][A-Za-z0-9_]*)\s*=\s*(.*)\s*$/.exec(line)
      if (!m || line.trimStart().startsWith('#')) continue
      const value = m[2]!.replace(/^(['"])(.*)\1$/, '$2')
      if (process.env[m[1]!] === undefined) process.env[m[1]!] = value
    }
  }
  if (!process.env.NUXT_SESSION_PASSWORD) {
    const secret = randomBytes(36).toString('base64url')
    if (!existsSync(path)) writeFileSync(path, '# Local secrets: never commit this file.\n', { mode: 0o600 })
    appendFileSync(path, `NUXT_SESSION_PASSWORD=${secret}\n`)
    process.env.NUXT_SESSION_PASSWORD = secret
    console.log(`[start] generated a session secret into ${path}`)
  }
}
