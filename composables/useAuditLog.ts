export interface AuditFilter {
  /** datetime-local values (the browser's time zone). */
  from: string
  to: string
  actor: string
  action: string
  subject: string
}

export const emptyAuditFilter = (): AuditFilter => ({ from: '', to: '', actor: '', action: '', subject: '' })

const iso = (local: string) => (local ? new Date(local).toISOString() : undefined)
const text = (s: string) => s.trim() || undefined

/** One page of the audit log for the applied filter; `apply` starts again at page 1. */
export function useAuditLog(pageSize = 50) {
  const applied = ref<AuditFilter>(emptyAuditFilter())
  const page = ref(1)
  const query = computed(() => ({
    from: iso(applied.value.from),
    to: iso(applied.value.to),
    actor: text(applied.value.actor),
    action: text(applied.value.action),
    subject: text(applied.value.subject),
    page: page.value,
    pageSize,
  }))
  const result = useFetch('/api/audit', { key: 'audit', query, watch: [query] })
  const pages = computed(() => Math.max(1, Math.ceil((result.data.value?.total ?? 0) / pageSize)))

  function apply(f: AuditFilter) {
    applied.value = { ...f }
    page.value = 1
  }

  return { ...result, page, pages, apply }
}
