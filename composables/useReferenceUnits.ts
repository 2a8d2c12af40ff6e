import type { ReferenceUnitView } from '#shared/types/api'
import { referenceRegisterSchema, referenceRetireSchema, type ReferenceRegisterInput } from '#shared/utils/reference-units'

/** The Reference units list, filtered by product and, on request, with retired units. */
export function useReferenceUnitList(filter: { product: string; retired: boolean }) {
  const query = computed(() => ({ ...(filter.product ? { product: filter.product } : {}), retired: filter.retired ? '1' : '0' }))
  return useFetch('/api/reference-units', { key: 'reference-units', query, default: (): ReferenceUnitView[] => [] })
}

export type ReferenceRegisterBody = Omit<ReferenceRegisterInput, 'measurements'> & { measurements?: number }

/** Registering and retiring reference units (engineers): the route's schemas check the input first. */
export function useReferenceUnitEditor() {
  const error = ref<string | null>(null)
  const code = ref<string | null>(null)
  const fieldErrors = ref<Record<string, string>>({})
  const busy = ref(false)

  async function register(body: ReferenceRegisterBody): Promise<ReferenceUnitView | undefined> {
    error.value = null
    code.value = null
    const checked = referenceRegisterSchema.safeParse(body)
    fieldErrors.value = checked.success ? {} : Object.fromEntries(checked.error.issues.map((i) => [i.path.join('.'), i.message]))
    if (!checked.success) {
      error.value = 'Check the fields marked below.'
      return undefined
    }
    busy.value = true
    try {
      const unit = await $fetch<ReferenceUnitView>('/api/reference-units', { method: 'POST', body })
      await refreshNuxtData('reference-units')
      return unit
    } catch (err) {
      const out = apiErrorOf(err)
      error.value = out.message
      code.value = out.code
      const issues = (err as { data?: { data?: { issues?: { path: string; message: string }[] } } }).data?.data?.issues ?? []
      fieldErrors.value = Object.fromEntries(issues.map((i) => [i.path, i.message]))
      // These refusals are about the serial: say so beside it too.
      if (out.code === 'unknown_serial' || out.code === 'reference_unit_exists') fieldErrors.value = { serial: out.message }
      return undefined
    } finally {
      busy.value = false
    }
  }

  /** Retires a unit; the refusal's words, or null when done. */
  async function retire(id: number, comment: string): Promise<string | null> {
    const checked = referenceRetireSchema.safeParse({ comment })
    if (!checked.success) return checked.error.issues[0]?.message ?? 'say why the unit is retired'
    busy.value = true
    try {
      // A plain string URL: Nitro's typed-route inference overflows on template literals.
      const url: string = `/api/reference-units/${id}/retire`
      await $fetch(url, { method: 'POST', body: checked.data })
      await refreshNuxtData('reference-units')
      return null
    } catch (err) {
      return apiErrorOf(err).message
    } finally {
      busy.value = false
    }
  }

  return { error, code, fieldErrors, busy, register, retire }
}
