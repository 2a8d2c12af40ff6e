import { describe, expect, it } from 'vitest'
import { readSource, sourceFiles } from '../support/source'

// Every audited action has one home: the service that does it writes the row through recordAudit
// (server/services/audit.ts), the only caller of the repo's insert. Routes, repos, the mail module
// and workers never write audit rows, so reading server/services lists every audited action.

const SCANNED = ['server', 'workers']

/** A call of the audit insert, of the service function, or a query on the audit table. */
const WRITES: { name: string; re: RegExp; allowedIn: (file: string) => boolean }[] = [
  { name: 'the repo insert', re: /\b(?:insertAuditEntry|writeAudit)\b/, allowedIn: (f) => f === 'server/repos/audit.ts' || f === 'server/services/audit.ts' },
  { name: 'recordAudit', re: /\brecordAudit\s*\(/, allowedIn: (f) => f.startsWith('server/services/') },
  { name: 'the audit table', re: /['"`]audit_log\b/, allowedIn: (f) => f === 'server/repos/audit.ts' },
]

function auditWritesOutsideServices(file: string, src: string): string[] {
  const found: string[] = []
  src.split('\n').forEach((line, i) => {
    if (/^\s*(?:\/\/|\*|\/\*)/.test(line)) return // comments may name them
    for (const w of WRITES) if (w.re.test(line) && !w.allowedIn(file)) found.push(`${file}:${i + 1}: ${w.name}`)
  })
  return found
}

const files = sourceFiles(SCANNED, /\.ts$/)

describe('audit rows are written from the service layer only', () => {
  it.each([
    ['server/api/auth/logout.post.ts', "await writeAudit(useDb(), { userId: id, action: 'auth.sign_out', entity: 'user', entityId: id })", 'the repo insert'],
    ['server/repos/masks.ts', "    await recordAudit(trx, { userId: by, action: 'mask.retire', entity: 'mask', entityId: maskId })", 'recordAudit'],
    ['server/mail/certificate.ts', "import { insertAuditEntry } from '../repos/audit'", 'the repo insert'],
    ['server/services/units.ts', 'await insertAuditEntry(db, entry)', 'the repo insert'],
    ['workers/analyze.ts', "await db('audit_log').insert(row)", 'the audit table'],
  ])('flags %s', (file, line, name) => {
    expect(auditWritesOutsideServices(file, line)).toEqual([`${file}:1: ${name}`])
  })

  it('lets services call recordAudit, and recordAudit call the insert', () => {
    expect(auditWritesOutsideServices('server/services/returns.ts', "await recordAudit(trx, { userId: by, action: 'return.edit' })")).toEqual([])
    expect(auditWritesOutsideServices('server/services/audit.ts', 'await insertAuditEntry(db, e)')).toEqual([])
  })

  it('finds no audit write in a route, repo, mail module or worker', () => {
    expect(files).toEqual(expect.arrayContaining(['server/services/audit.ts', 'server/repos/audit.ts', 'workers/analyze.ts']))
    expect(files.flatMap((f) => auditWritesOutsideServices(f, readSource(f)))).toEqual([])
  })

  it('every service that audits goes through recordAudit (the check above reads real calls)', () => {
    const callers = files.filter((f) => /\brecordAudit\s*\(/.test(readSource(f)))
    expect(callers).toEqual(expect.arrayContaining(['server/services/people.ts', 'server/services/returns.ts', 'server/services/masks.ts', 'server/services/stations.ts', 'server/services/sign-in.ts', 'server/services/exports.ts']))
  })
})
