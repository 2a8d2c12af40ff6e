import { spawnSync } from 'node:child_process'
import { existsSync } from 'node:fs'
import { chromium, type Browser } from 'playwright-core'

const CHROMIUM = '/usr/bin/chromium'

/** Debian's chromium (playwright gives each launch a fresh temporary profile), installed with apt-get when absent (never a tool's own browser download). */
export function ensureChromium(): string {
  if (existsSync(CHROMIUM)) return CHROMIUM
  if (process.getuid?.() !== 0) throw new Error('Debian chromium is missing: sudo apt-get install -y chromium')
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  for (const args of [['update'], ['install', '-y', '--no-install-recommends', 'chromium']]) {
    const r = spawnSync('apt-get', args, { stdio: 'inherit', env })
    if (r.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed; install chromium by hand`)
  }
  return CHROMIUM
}

export async function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: ensureChromium(),
    headless: true,
    args: [
      '--headless',
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--no-first-run',
    ],
  })
}
