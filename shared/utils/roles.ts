/** The five roles (glossary). Admin may also do everything the other roles may. */
export const ROLES = ['technician', 'engineer', 'quality', 'support', 'admin'] as const
export type Role = (typeof ROLES)[number]

export const ROLE_LABELS: Record<Role, string> = {
  technician: 'Test technician',
  engineer: 'Engineer',
  quality: 'Quality',
  support: 'Support',
  admin: 'Admin',
}

export function isRole(value: unknown): value is Role {
  return typeof value === 'string' && (ROLES as readonly string[]).includes(value)
}

/** True when a user of `role` may use something open to `allowed` (admin may use everything). */
export function roleAllows(role: Role | undefined | null, allowed: readonly Role[]): boolean {
  if (!role) return false
  return role === 'admin' || allowed.includes(role)
}
