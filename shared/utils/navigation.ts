import type { Role } from './roles'

export interface NavItem {
  to: string
  label: string
  /** Roles that see the item; admin sees every item. */
  roles: readonly Role[]
  hint: string
  /** False: never a role's first page after signing in (a page every role may read but no role works from). */
  landing?: false
}

/** Each role's work, in the order the navigation shows it. Route middleware reads the same list. */
export const NAV_ITEMS: readonly NavItem[] = [
  { to: '/bench', label: 'Bench', roles: ['technician', 'engineer'], hint: 'Scan a serial, upload a recording, see the verdict' },
  { to: '/products', label: 'Products', roles: ['engineer'], hint: 'Driver models, rated impedance and voice-coil data' },
  { to: '/masks', label: 'Masks', roles: ['engineer'], hint: 'Tolerance masks built from golden units' },
  { to: '/stations', label: 'Stations', roles: ['engineer'], hint: 'Test positions and their calibration profiles' },
  { to: '/reference-units', label: 'References', roles: ['technician', 'support', 'quality', 'engineer'], hint: 'Known units kept to check the test stations', landing: false },
  { to: '/lots', label: 'Lots', roles: ['quality', 'engineer'], hint: 'Yield, failure Pareto and drift per lot' },
  { to: '/units', label: 'Units', roles: ['support', 'quality', 'engineer', 'technician'], hint: 'Find any unit by serial' },
  { to: '/returns', label: 'Returns', roles: ['support', 'quality', 'engineer'], hint: 'Units sent back from the field' },
  { to: '/people', label: 'People', roles: ['admin'], hint: 'Accounts, invitations and roles' },
  { to: '/audit', label: 'Audit log', roles: ['admin'], hint: 'Who did what and when: sign-ins, roles, tokens, masks, exports' },
]

/** The nav item that owns a path (longest prefix), or undefined for open pages. */
export function navItemFor(path: string): NavItem | undefined {
  return NAV_ITEMS.filter((i) => path === i.to || path.startsWith(i.to + '/')).sort((a, b) => b.to.length - a.to.length)[0]
}

/** The first page a role lands on after signing in. */
export function homeFor(role: Role): string {
  return NAV_ITEMS.find((i) => role !== 'admin' && i.landing !== false && i.roles.includes(role))?.to ?? '/people'
}
