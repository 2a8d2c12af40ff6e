/** Sends a lot's PDF report by e-mail; the server's message comes back as the error when it refuses. */
export function useLotSend(code: Ref<string>) {
  const busy = ref(false)
  const error = ref<string | null>(null)
  const sentTo = ref<string[] | null>(null)

  /** Recipients typed one per line or separated by commas or semicolons. */
  function parseRecipients(text: string): string[] {
    return text.split(/[\s,;]+/).map((s) => s.trim()).filter(Boolean)
  }

  async function send(recipientsText: string, message: string): Promise<boolean> {
    const recipients = parseRecipients(recipientsText)
    error.value = null
    sentTo.value = null
    if (!recipients.length) {
      error.value = 'Add at least one e-mail address.'
      return false
    }
    busy.value = true
    try {
      const url: string = `/api/lots/${encodeURIComponent(code.value)}/send`
      await $fetch(url, { method: 'POST', body: { recipients, ...(message.trim() ? { message: message.trim() } : {}) } })
      sentTo.value = recipients
      return true
    } catch (err) {
      error.value = apiErrorOf(err).message
      return false
    } finally {
      busy.value = false
    }
  }

  return { busy, error, sentTo, send }
}
