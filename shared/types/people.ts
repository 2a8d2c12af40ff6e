import type { Role } from '../utils/roles'
import type { PersonSummary } from './api'

/** A person as the People page shows them (never the password hash). */
export interface PersonView extends PersonSummary {
  createdAt: string
  deactivatedAt: string | null
  /** Display name of the admin who deactivated them. */
  deactivatedBy: string | null
}

export type InvitationStatus = 'pending' | 'used' | 'expired' | 'revoked'

export interface InvitationView {
  id: number
  email: string
  role: Role
  invitedBy: string
  createdAt: string
  expiresAt: string
  status: InvitationStatus
  usedAt: string | null
}

/** What the admin sees once, right after inviting: the link itself (only its hash is kept). */
export interface InvitationCreated extends InvitationView {
  link: string
  mailed: boolean
  /** Why the e-mail did not go out (the link still works: hand it over another way). */
  mailError: string | null
}

/** What the public accept page may know about a pending invitation. */
export interface InvitationPublic {
  email: string
  role: Role
  expiresAt: string
}

export interface AuditEntryView {
  id: number
  at: string
  actor: { id: number; displayName: string; email: string } | null
  action: string
  entity: string
  entityId: string
  /** A readable name of what was acted on (an e-mail, a station, a lot code). */
  subject: string
  comment: string | null
  detail: Record<string, unknown>
  ip: string | null
}

export interface AuditPage {
  entries: AuditEntryView[]
  total: number
  page: number
  pageSize: number
  /** Every action the log holds, for the filter's list. */
  actions: string[]
}
