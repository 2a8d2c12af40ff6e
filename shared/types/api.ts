import type { Role } from '../utils/roles'

/** The body of every error answer: h3's shape with a machine code in data.code. */
export interface ApiErrorBody {
  statusCode: number
  message: string
  data: { code: string; issues?: { path: string; message: string }[] }
}

export interface HealthResponse {
  ok: boolean
  version: string
  database: { ok: boolean; latencyMs: number | null }
}

export interface SessionUser {
  id: number
  email: string
  displayName: string
  role: Role
}

export interface MeResponse {
  user: SessionUser
}

export interface PersonSummary {
  id: number
  email: string
  displayName: string
  role: Role
  active: boolean
  lastLoginAt: string | null
}
