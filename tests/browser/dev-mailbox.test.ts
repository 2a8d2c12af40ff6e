import nodemailer from 'nodemailer'
import { describe, expect, inject, it } from 'vitest'
import { runningSink } from '../../server/mail/index'
import { signInAs, useBrowser } from '../support/browser'
import { unique } from '../support/db'

const baseUrl = inject('baseUrl')
const browser = useBrowser()

describe('an admin reads the dev mailbox', () => {
  it('lists what the sink received and opens a message', async () => {
    const sink = runningSink(inject('mailboxDir'))
    expect(sink).not.toBeNull()
    const subject = unique('Browser check')
    const t = nodemailer.createTransport(sink!.url)
    await t.sendMail({ from: 'conetrail@example.test', to: 'reader@example.test', subject, text: 'Hello from the mailbox test.', attachments: [{ filename: 'note.txt', content: 'x' }] })
    t.close()

    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'admin', '/dev/mailbox')
    const row = page.getByTestId('mailbox-list').locator('tr', { hasText: subject })
    await expect.poll(() => row.count()).toBe(1)
    expect(await row.textContent()).toContain('note.txt')
    await row.click()
    const message = page.getByTestId('mailbox-message')
    await expect.poll(() => message.textContent()).toContain('Hello from the mailbox test.')
    expect(await message.textContent()).toContain('reader@example.test')
    await page.close()
  })

  it('shows a quality engineer the refusal, not the mail', async () => {
    const page = await browser().newPage({ viewport: { width: 1366, height: 768 } })
    await signInAs(page, baseUrl, 'quality', '/dev/mailbox')
    await expect.poll(() => page.locator('main').textContent()).toContain('admin')
    expect(await page.getByTestId('mailbox-list').count()).toBe(0)
    await page.close()
  })
})
