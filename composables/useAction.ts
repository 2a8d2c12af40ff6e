/**
 * The state every form's mutation shares: `busy` while it runs, the server's message in `error`
 * when it refuses. `run` answers true when the task finished.
 */
export function useAction() {
  const busy = ref(false)
  const error = ref<string | null>(null)

  async function run(task: () => Promise<void>): Promise<boolean> {
    busy.value = true
    error.value = null
    try {
      await task()
      return true
    } catch (err) {
      error.value = apiErrorOf(err).message
      return false
    } finally {
      busy.value = false
    }
  }

  return { busy, error, run }
}

/**
 * An e-mail form (lot report, certificate): recipients typed one per line or separated by commas
 * or semicolons, an optional message; `post` sends them and answers who the mail went to.
 */
export function useMailSend(post: (recipients: string[], message?: string) => Promise<string[]>) {
  const { busy, error, run } = useAction()
  const sentTo = ref<string[] | null>(null)
  const recipients = ref('')
  const message = ref('')

  /** Sends what the form holds and clears it once the mail is out. */
  async function submit(): Promise<boolean> {
    const to = recipients.value.split(/[\s,;]+/).map((s) => s.trim()).filter(Boolean)
    sentTo.value = null
    if (!to.length) {
      error.value = 'Add at least one e-mail address.'
      return false
    }
    const done = await run(async () => {
      sentTo.value = await post(to, message.value.trim() || undefined)
    })
    if (done) recipients.value = message.value = ''
    return done
  }

  return { recipients, message, busy, error, sentTo, submit }
}
