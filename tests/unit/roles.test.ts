import { readdirSync, readFileSync } from 'node:fs'
import { join, resolve } from 'node:path'
import { describe, expect, it } from 'vitest'
import { AUDIT_ACTION_LABELS } from '../../shared/utils/audit'
import { ROLES, isRole, roleAllows } from '../../shared/utils/roles'
import { NAV_ITEMS, homeFor, navItemFor } from '../../shared/utils/navigation'

describe('roleAllows', () => {
  it.each([
    ['technician', ['technician'], true],
    ['technician', ['engineer'], false],
    ['engineer', ['technician', 'engineer'], true],
    ['quality', ['support'], false],
    ['admin', ['technician'], true],
    ['admin', ['quality', 'support'], true],
  ] as const)('%s for %j → %s', (role, allowed, expected) => {
    expect(roleAllows(role, allowed)).toBe(expected)
  })

  it('refuses a missing role', () => {
    expect(roleAllows(undefined, ['technician'])).toBe(false)
    expect(roleAllows(null, [...ROLES])).toBe(false)
  })

  it('recognises exactly the five roles', () => {
    expect(ROLES.every(isRole)).toBe(true)
    expect(isRole('Admin')).toBe(false)
    expect(isRole('superuser')).toBe(false)
    expect(isRole(3)).toBe(false)
  })
})

describe('navigation by role', () => {
  const visible = (role: (typeof ROLES)[number]) => NAV_ITEMS.filter((i) => roleAllows(role, i.roles)).map((i) => i.label)

  it('shows each role its work', () => {
    expect(visible('technician')).toContain('Bench')
    expect(visible('technician')).not.toContain('People')
    expect(visible('engineer')).toEqual(expect.arrayContaining(['Masks', 'Stations']))
    expect(visible('quality')).toContain('Lots')
    expect(visible('support')).toEqual(expect.arrayContaining(['Units', 'Returns']))
    expect(visible('admin')).toEqual(NAV_ITEMS.map((i) => i.label))
  })

  it('lands every role on a page it may open', () => {
    for (const role of ROLES) {
      const item = navItemFor(homeFor(role))
      expect(item, role).toBeDefined()
      expect(roleAllows(role, item!.roles)).toBe(true)
    }
  })

  it('finds the owning item of a nested path, and none for open pages', () => {
    expect(navItemFor('/masks/12/preview')?.label).toBe('Masks')
    expect(navItemFor('/login')).toBeUndefined()
    expect(navItemFor('/benchmark')).toBeUndefined()
  })
})

describe('audit log labels', () => {
  // Every action the server writes (a literal `action: '…'`, or both sides of a ternary) reads as
  // words on the audit page: a new audited event without a label fails here.
  it('has a label for every action written under server/', () => {
    const root = resolve(import.meta.dirname, '../../server')
    const files = readdirSync(root, { recursive: true, encoding: 'utf8' }).filter((f) => f.endsWith('.ts'))
    const actions = new Set<string>()
    for (const f of files) {
      const src = readFileSync(join(root, f), 'utf8')
      for (const m of src.matchAll(/action:\s*([^,}\n]+)/g)) for (const a of m[1]!.matchAll(/'([a-z][a-z_-]*\.[a-z_]+)'/g)) actions.add(a[1]!)
    }
    expect(actions.size).toBeGreaterThan(20)
    expect([...actions].filter((a) => !(a in AUDIT_ACTION_LABELS))).toEqual([])
  })
})
