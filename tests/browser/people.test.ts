import { describe, expect, inject, it } from 'vitest'
import { DEMO_PASSWORD, demoEmail } from '../../seeds/01-demo-users'
import type { InvitationCreated } from '../../shared/types/people'
import { signIn } from '../support/app'
import { hydrated, signInAs, useBrowser } from '../support/browser'
import { unique } from '../support/db'

const baseUrl = inject('baseUrl')
const browser = useBrowser()

describe('an admin in the browser', () => {
  it('invites someone, who opens the link in a fresh browser, sets a password and is signed in; the admin finds it in the audit log', async () => {
    const admin = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(admin, baseUrl, 'admin', '/people')
    const email = `${unique('browser').toLowerCase()}@example.test`
    await admin.fill('input[name=invite-email]', email)
    await admin.selectOption('select[name=invite-role]', 'quality')
    await admin.getByRole('button', { name: 'Send invitation' }).click()
    const notice = admin.getByTestId('invitation-link')
    await expect.poll(() => notice.textContent()).toContain('sent by e-mail')
    const link = (await notice.locator('p.font-mono').textContent())!.trim()
    expect(link).toMatch(/\/invite\/[A-Za-z0-9_-]{43}$/)
    await expect.poll(() => admin.getByTestId('invitations-table').textContent()).toContain(email)

    // The invited person: another browser context, no session, no cookies.
    const context = await browser().newContext()
    const guest = await context.newPage()
    await guest.goto(link)
    await expect.poll(() => guest.locator('form').textContent()).toContain(email)
    await guest.fill('input[name=displayName]', 'Browser Invitee')
    await guest.fill('input[name=password]', 'short')
    await guest.fill('input[name=repeat]', 'short')
    await guest.getByRole('button', { name: 'Create my account' }).click()
    await expect.poll(() => guest.getByTestId('invite-problem').textContent()).toContain('At least 12 characters')
    await guest.fill('input[name=password]', 'a long browser password')
    await guest.fill('input[name=repeat]', 'a long browser password')
    await guest.getByRole('button', { name: 'Create my account' }).click()
    // Quality lands on its first page, signed in.
    await guest.waitForURL((u) => u.pathname === '/lots')
    await expect.poll(() => guest.getByTestId('user-name').textContent()).toContain('Browser Invitee')

    // The link is used: opening it again says so.
    const again = await (await browser().newContext()).newPage()
    await again.goto(link)
    await expect.poll(async () => again.getByTestId('invite-error').getAttribute('data-code')).toBe('invitation_used')
    await again.context().close()
    await context.close()

    // The admin filters the audit log down to this person.
    await admin.goto(new URL('/audit', baseUrl).toString())
    await admin.fill('input[name=subject]', email)
    await admin.selectOption('select[name=action]', 'invitation.accept')
    await admin.getByRole('button', { name: 'Filter' }).click()
    await expect.poll(() => admin.getByTestId('audit-count').textContent()).toMatch(/^1 entry/)
    const row = admin.getByTestId('audit-row')
    expect(await row.count()).toBe(1)
    expect(await row.textContent()).toContain('Invitation accepted')
    expect(await row.textContent()).toContain('Browser Invitee')
    await admin.getByRole('button', { name: 'Clear' }).click()
    await expect.poll(async () => Number((await admin.getByTestId('audit-count').textContent())!.split(' ')[0])).toBeGreaterThan(1)
    await admin.close()
  })
})

describe('changing someone\'s role', () => {
  it('changes nothing until Save is pressed (an arrow key on the select is not a change); then says so and logs it', async () => {
    const cookie = (await signIn(baseUrl, demoEmail('admin'), DEMO_PASSWORD)).cookie
    const email = `${unique('role').toLowerCase()}@example.test`
    const post = (path: string, body: unknown, withCookie: boolean) =>
      fetch(new URL(path, baseUrl), { method: 'POST', headers: { 'content-type': 'application/json', ...(withCookie ? { cookie } : {}) }, body: JSON.stringify(body) })
    const invited = (await (await post('/api/invitations', { email, role: 'support' }, true)).json()) as InvitationCreated
    const token = new URL(invited.link).pathname.split('/').at(-1)!
    expect((await post(`/api/invitations/accept/${token}`, { displayName: 'Role Person', password: 'a long browser password' }, false)).status).toBe(201)
    const roleOnServer = async () => ((await (await fetch(new URL('/api/people', baseUrl), { headers: { cookie } })).json()) as { email: string; role: string }[]).find((p) => p.email === email)!.role
    const roleChanges = async () => {
      const res = await fetch(new URL(`/api/audit?action=user.role_change&subject=${encodeURIComponent(email)}`, baseUrl), { headers: { cookie } })
      return ((await res.json()) as { total: number }).total
    }

    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'admin', '/people')
    await hydrated(page)
    const row = page.getByTestId(`person-${email}`)
    const select = row.getByRole('combobox', { name: 'Role of Role Person' })
    await select.focus()
    await select.press('ArrowDown')
    // The key moved the choice in the browser, and nothing else: no request, no note, the stored role stays.
    await expect.poll(() => select.inputValue()).not.toBe('support')
    await page.waitForLoadState('networkidle')
    expect(await roleOnServer()).toBe('support')
    expect(await roleChanges()).toBe(0)
    expect(await row.getByTestId('role-changed').count()).toBe(0)
    const pending = row.getByTestId('role-pending')
    expect(await pending.getByRole('button', { name: 'Save role' }).isVisible()).toBe(true)
    // "Keep" puts the stored role back.
    await pending.getByRole('button', { name: 'Keep Support' }).click()
    await expect.poll(() => select.inputValue()).toBe('support')
    expect(await pending.count()).toBe(0)

    await select.selectOption('quality')
    expect(await roleOnServer()).toBe('support')
    await pending.getByRole('button', { name: 'Save role' }).click()
    const note = row.getByTestId('role-changed')
    await expect.poll(() => note.textContent()).toContain('Role changed to Quality')
    expect(await roleOnServer()).toBe('quality')
    expect(await select.inputValue()).toBe('quality')
    expect(await pending.count()).toBe(0)
    expect(await roleChanges()).toBe(1)
    await page.close()
  })
})

describe('deactivating someone', () => {
  it('asks once more before it acts; "Keep active" changes nothing', async () => {
    const cookie = (await signIn(baseUrl, demoEmail('admin'), DEMO_PASSWORD)).cookie
    const email = `${unique('confirm').toLowerCase()}@example.test`
    const post = (path: string, body: unknown, withCookie: boolean) =>
      fetch(new URL(path, baseUrl), { method: 'POST', headers: { 'content-type': 'application/json', ...(withCookie ? { cookie } : {}) }, body: JSON.stringify(body) })
    const invited = (await (await post('/api/invitations', { email, role: 'support' }, true)).json()) as InvitationCreated
    const token = new URL(invited.link).pathname.split('/').at(-1)!
    expect((await post(`/api/invitations/accept/${token}`, { displayName: 'Confirm Me', password: 'a long browser password' }, false)).status).toBe(201)
    const active = async () => ((await (await fetch(new URL('/api/people', baseUrl), { headers: { cookie } })).json()) as { email: string; active: boolean }[]).find((p) => p.email === email)!.active

    const page = await browser().newPage({ viewport: { width: 1366, height: 900 } })
    await signInAs(page, baseUrl, 'admin', '/people')
    const row = page.getByTestId(`person-${email}`)
    await row.getByRole('button', { name: 'Deactivate' }).click()
    const confirm = row.getByTestId('deactivate-confirm')
    expect(await confirm.textContent()).toContain('Sign Confirm Me out everywhere')
    expect(await active()).toBe(true)
    await confirm.getByRole('button', { name: 'Keep active' }).click()
    await expect.poll(() => confirm.count()).toBe(0)
    expect(await active()).toBe(true)

    await row.getByRole('button', { name: 'Deactivate' }).click()
    await row.getByRole('button', { name: 'Yes, deactivate' }).click()
    await expect.poll(() => row.textContent()).toContain('Deactivated')
    expect(await active()).toBe(false)
    await page.close()
  })
})
