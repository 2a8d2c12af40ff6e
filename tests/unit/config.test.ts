import { mkdtempSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { ConfigError, DEFAULTS, dbPasswordFile, loadConfig, withDatabase } from '../../server/utils/config'

const cwd = '/srv/conetrail'

describe('loadConfig', () => {
  it('uses the documented defaults', () => {
    const c = loadConfig({}, cwd)
    expect(c.host).toBe('127.0.0.1')
    expect(c.port).toBe(3000)
    expect(c.pg.port).toBe(DEFAULTS.pgPort)
    expect(c.pg.port).not.toBe(5432)
    expect(c.dataDir).toBe('/srv/conetrail/.data')
    expect(c.demo).toBe(true)
    expect(c.bootstrapAdmin).toBeNull()
    expect(c.externalDatabase).toBe(false)
    expect(c.databaseUrl).toBe(`postgres://conetrail@127.0.0.1:${DEFAULTS.pgPort}/conetrail`)
  })

  it('reads PORT, HOST, PGPORT, CONETRAIL_DATA_DIR and CONETRAIL_DEMO so two instances can run side by side', () => {
    const c = loadConfig({ PORT: '3100', HOST: '0.0.0.0', PGPORT: '55001', CONETRAIL_DATA_DIR: 'second', CONETRAIL_DEMO: '0' }, cwd)
    expect(c).toMatchObject({ port: 3100, host: '0.0.0.0', dataDir: '/srv/conetrail/second', demo: false })
    expect(c.databaseUrl).toContain('@127.0.0.1:55001/')
  })

  it('prefers DATABASE_URL and then does not manage a server', () => {
    const c = loadConfig({ DATABASE_URL: 'postgres://u:p@db.internal:6543/prod', PGPORT: '1234' }, cwd)
    expect(c.databaseUrl).toBe('postgres://u:p@db.internal:6543/prod')
    expect(c.externalDatabase).toBe(true)
  })

  it('reads the generated database password from the data directory, escaped in the URL', () => {
    const dir = mkdtempSync(join(tmpdir(), 'conetrail-cfg-'))
    writeFileSync(dbPasswordFile(dir), 'p@ss/word\n')
    const c = loadConfig({ CONETRAIL_DATA_DIR: dir }, cwd)
    expect(c.pg.password).toBe('p@ss/word')
    expect(new URL(c.databaseUrl).password).toBe(encodeURIComponent('p@ss/word'))
  })

  it('takes the first-run admin only when both e-mail and password are set', () => {
    expect(loadConfig({ CONETRAIL_ADMIN_EMAIL: 'a@b.test' }, cwd).bootstrapAdmin).toBeNull()
    expect(loadConfig({ CONETRAIL_ADMIN_EMAIL: ' a@b.test ', CONETRAIL_ADMIN_PASSWORD: 'long secret' }, cwd).bootstrapAdmin).toEqual({
      email: 'a@b.test',
      password: 'long secret',
    })
  })

  it.each([
    [{ PORT: 'eighty' }, /PORT/],
    [{ PORT: '70000' }, /PORT/],
    [{ PGPORT: '-1' }, /PGPORT/],
    [{ DATABASE_URL: 'mysql://x@y/z' }, /DATABASE_URL/],
    [{ DATABASE_URL: 'not a url' }, /DATABASE_URL/],
  ])('rejects %j with a message naming the variable', (env, re) => {
    expect(() => loadConfig(env, cwd)).toThrow(ConfigError)
    expect(() => loadConfig(env, cwd)).toThrow(re)
  })

  it('points a URL at another database on the same server', () => {
    expect(withDatabase('postgres://u:p@127.0.0.1:5000/conetrail', 'conetrail_test')).toBe('postgres://u:p@127.0.0.1:5000/conetrail_test')
  })
})
