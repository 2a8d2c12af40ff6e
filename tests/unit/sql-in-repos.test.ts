import { describe, expect, it } from 'vitest'
import { readSource, sourceFiles } from '../support/source'

// SQL lives in server/repos (and in scripts/, seeds/, migrations/, which run outside the server).
// Everything else calls a repo function, so a reader finds every query of an aggregate in one
// file. This test reads the source the way the interpolated-SQL check in
// tests/e2e/security-headers.test.ts does: a line that uses Knex outside the repos fails it.

/** Source folders that must hold no SQL (the Nuxt client folders included: they never may). */
const SCANNED = ['server', 'workers', 'shared', 'fixtures', 'pages', 'components', 'composables', 'stores', 'middleware', 'plugins', 'layouts', 'utils']
const REPOS = 'server/repos/'

/**
 * Lines that use Knex. The names are the ones this code base gives a Knex instance or transaction
 * (`db`, `trx`, `tx`, `knex`); a query always starts from one of them, or from a `…Raw(` helper.
 */
const KNEX_USES: { name: string; re: RegExp }[] = [
  { name: 'table query', re: /\b(?:db|trx|tx|knex)\s*(?:<[^>()]*>)?\(\s*['"`]/ },
  { name: 'builder method', re: /\b(?:db|trx|tx|knex)\s*\.\s*(?:raw|select|from|insert|update|delete|del|with|withRecursive|schema|fn|queryBuilder|table|count|first|pluck|client)\b/ },
  { name: 'raw SQL', re: /\.raw\s*\(|\b(?:where|orWhere|having|orderBy|groupBy|join|select)Raw\s*\(/ },
  { name: 'the server instance used directly', re: /\buseDb\(\)\s*[.(]/ },
  { name: 'a Knex instance', re: /\bknex\s*\(/ },
  { name: 'a transaction', re: /\.transaction\s*\(/ },
]

/**
 * The narrow exceptions, each for one file and one kind of use, with its reason. Nothing here
 * builds SQL. (The sign-in rate limiter hands `useDb()` to its library as a store and calls no
 * Knex method itself, so it needs no entry.)
 */
const ALLOWED: { file: string | RegExp; use: string; reason: string }[] = [
  { file: 'server/utils/db.ts', use: 'a Knex instance', reason: 'creates the server’s one Knex instance' },
  { file: 'workers/analyze.ts', use: 'a Knex instance', reason: 'a worker is its own process and opens its own pool' },
  {
    file: 'server/queue/index.ts',
    use: 'builder method',
    reason: 'hands the caller’s transaction connection to pg-boss, so the job row commits with the recording row; the SQL is pg-boss’s own',
  },
  {
    file: /^server\/services\//,
    use: 'a transaction',
    reason: 'a service spans repos, storage and the queue: it opens the transaction and passes it to each repo call',
  },
]

/** `file:line: use` for each Knex use in the text that no exception covers. */
function knexUsesOutsideRepos(file: string, src: string): string[] {
  if (file.startsWith(REPOS)) return []
  // Comment lines may name a query; blanked, not removed, so line numbers stay true. The whole
  // text is searched (not line by line) because a chain often starts on the next line: `db\n.select(`.
  const code = src.split('\n').map((line) => (/^\s*(?:\/\/|\*|\/\*)/.test(line) ? '' : line)).join('\n')
  const found: string[] = []
  for (const u of KNEX_USES) {
    if (ALLOWED.some((a) => a.use === u.name && (typeof a.file === 'string' ? a.file === file : a.file.test(file)))) continue
    for (const m of code.matchAll(new RegExp(u.re.source, 'g'))) found.push(`${file}:${code.slice(0, m.index).split('\n').length}: ${u.name}`)
  }
  return found
}

describe('SQL only in repos', () => {
  it.each([
    ["const row = await db('alert_settings').where({ product_id: productId }).first()", 'table query'],
    ["return db<RecordingRow>('recordings').where({ id }).first()", 'table query'],
    ["await trx('alerts').where({ lot_id: lot.id }).update({ closed_at: trx.fn.now() })", 'table query'],
    ['const rows = await db\n    .select(\'verdict\')', 'builder method'],
    ["await trx.raw('SELECT pg_advisory_xact_lock(hashtextextended(?, 0))', [key])", 'builder method'],
    [".where('r.uploaded_at', '<', x.raw(\"now() - interval '1 minute'\"))", 'raw SQL'],
    [".whereRaw(\"(j.data->>'recordingId')::bigint = r.id\")", 'raw SQL'],
    ["useDb().raw('select 1'),", 'the server instance used directly'],
    ['const db = knex(knexConfig(cfg.databaseUrl))', 'a Knex instance'],
    ['await useDb().transaction(async (t) => {', 'a transaction'],
  ])('finds a Knex use in %s', (line, use) => {
    expect(knexUsesOutsideRepos('server/api/example.get.ts', line).join('\n')).toContain(use)
  })

  it.each([
    "const RIFF = Buffer.from('RIFF')",
    'const edges = Array.from({ length: bins + 1 }, (_, i) => i)',
    'const re = String.raw`\\d+`',
    'storeClient: useDb(),',
    'return (await listLots(useDb(), filter)) satisfies LotSummary[]',
    "// db('units') is read by the repo",
    'const dbOk = await pingDatabase(useDb())',
  ])('finds none in %s', (line) => {
    expect(knexUsesOutsideRepos('server/api/example.get.ts', line)).toEqual([])
  })

  it('leaves the repos and the listed exceptions alone', () => {
    expect(knexUsesOutsideRepos('server/repos/alerts.ts', "await db('alerts').where({ id })")).toEqual([])
    expect(knexUsesOutsideRepos('server/services/ingest.ts', 'return await db.transaction(async (trx) => {')).toEqual([])
    expect(knexUsesOutsideRepos('server/services/ingest.ts', "await trx('recordings').insert(row)")).not.toEqual([])
  })

  it('no file outside server/repos, scripts/, seeds/ and migrations/ calls Knex', () => {
    const files = sourceFiles(SCANNED)
    expect(files.length).toBeGreaterThan(100)
    expect(files).toContain('server/services/alerts.ts')
    expect(files.flatMap((f) => knexUsesOutsideRepos(f, readSource(f)))).toEqual([])
  })

  it('every exception still matches a use in its file (a stale one would hide nothing, and mislead)', () => {
    for (const a of ALLOWED.filter((x) => typeof x.file === 'string')) {
      const src = readSource(a.file as string)
      expect(KNEX_USES.find((u) => u.name === a.use)!.re.test(src), `${a.file}: ${a.use}`).toBe(true)
    }
  })
})
