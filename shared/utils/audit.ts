import { z } from 'zod'
import { decimalNumber, plainText } from './input'

export const auditQuerySchema = z.object({
  from: z.iso.datetime({ offset: true }).optional(),
  to: z.iso.datetime({ offset: true }).optional(),
  /** Part of the actor's e-mail or name. */
  actor: plainText().trim().max(120).optional(),
  action: z.string().trim().max(64).regex(/^[a-z_.]*$/, 'Letters, dots and underscores').optional(),
  /** Part of the subject (an e-mail, a station, a lot code, an id). */
  subject: plainText().trim().max(200).optional(),
  page: decimalNumber(z.number().int().min(1).max(100_000).default(1)),
  pageSize: decimalNumber(z.number().int().min(1).max(200).default(50)),
})
export type AuditQuery = z.infer<typeof auditQuerySchema>

/** Readable labels of the actions Conetrail writes (others show their code). */
export const AUDIT_ACTION_LABELS: Record<string, string> = {
  'auth.sign_in': 'Signed in',
  'auth.sign_in_failed': 'Sign-in failed',
  'auth.sign_out': 'Signed out',
  'invitation.create': 'Invited',
  'invitation.revoke': 'Invitation withdrawn',
  'invitation.accept': 'Invitation accepted',
  'user.role_change': 'Role changed',
  'user.deactivate': 'Deactivated',
  'user.reactivate': 'Reactivated',
  'station.token_issue': 'Station token issued',
  'station.token_rotate': 'Station token replaced',
  'station.check_plan': 'Station check plan set',
  'station.check_failed': 'Station check failed',
  'station.release': 'Blocked station released',
  'mask.release': 'Mask released',
  'mask.retire': 'Mask retired',
  'mask.export_csv': 'Mask limits CSV exported',
  'reference_unit.register': 'Reference unit registered',
  'reference_unit.retire': 'Reference unit retired',
  'lot.export_csv': 'Lot CSV exported',
  'lot.export_pdf': 'Lot report PDF exported',
  'lot.report_sent': 'Lot report e-mailed',
  'certificate.download': 'Certificate downloaded',
  'certificate.send': 'Certificate e-mailed',
  'return.register': 'Return registered',
  'return.edit': 'Return edited',
  'return.attach': 'Return attachment added',
  'return.retest': 'Return re-test uploaded',
  'return.close': 'Return closed',
  'return-category.add': 'Complaint category added',
  'return-category.change': 'Complaint category changed',
}
