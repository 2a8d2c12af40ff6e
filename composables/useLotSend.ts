/** Sends a lot's PDF report by e-mail; the server's message comes back as the error when it refuses. */
export function useLotSend(code: Ref<string>) {
  return useMailSend(async (recipients, message) => {
    const url: string = `/api/lots/${encodeURIComponent(code.value)}/send`
    await $fetch(url, { method: 'POST', body: { recipients, ...(message ? { message } : {}) } })
    return recipients
  })
}
