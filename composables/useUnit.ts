import type { RecordingView } from '#shared/types/api'
import type { CertificateSent, UnitTest, UnitView } from '#shared/types/units'

/** One unit's factory record (key per serial so two units never share a cache entry). */
export function useUnit(serial: Ref<string>) {
  return useFetch<UnitView>(() => `/api/units/${encodeURIComponent(serial.value)}`, { key: computed(() => `unit:${serial.value}`) })
}

/** The curves of one test with the limits of the mask that judged it (browser only: they are only drawn there). */
export function useUnitCurves(recordingId: Ref<number | null>) {
  return useFetch<RecordingView>(() => `/api/recordings/${recordingId.value ?? 0}`, {
    key: computed(() => `unit-curves:${recordingId.value}`),
    query: { include: 'curves' },
    server: false,
    immediate: recordingId.value !== null,
  })
}

/** The test a record opens on: the latest production test, else the latest test of any kind. */
export function defaultTestId(tests: UnitTest[], latestProductionId: number | null): number | null {
  return latestProductionId ?? tests[0]?.id ?? null
}

/** Local date and time of an ISO timestamp, e.g. 2026-12-02 14:03 (the shared formatWhen). */
export function unitWhen(iso: string): string {
  return formatWhen(iso)
}

/** The certificate download of a unit (a plain link: the browser keeps the session cookie). */
export function certificateUrl(serial: string): string {
  return `/api/units/${encodeURIComponent(serial)}/certificate.pdf`
}

/** E-mails a unit's certificate; the server's message comes back as the error when it refuses. */
export function useCertificateSend(serial: Ref<string>) {
  return useMailSend(async (to, message) => {
    const url: string = `/api/units/${encodeURIComponent(serial.value)}/certificate/send`
    const sent = await $fetch<CertificateSent>(url, { method: 'POST', body: { to, ...(message ? { message } : {}) } })
    return sent.recipients
  })
}
