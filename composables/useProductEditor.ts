import type { ApiErrorBody } from '#shared/types/api'
import { productCreateSchema, type ProductListItem } from '#shared/utils/product'
import type { ProductDraft } from '~/utils/product-draft'

/** Field path → message, from the zod schema on the client or from a 400 answer's issues. */
export type FieldErrors = Record<string, string>

function issuesOf(err: unknown): FieldErrors {
  const issues = (err as { data?: Partial<ApiErrorBody> } | null)?.data?.data?.issues ?? []
  return Object.fromEntries(issues.map((i) => [i.path, i.message]))
}

/** Create and edit for the Products page: the same schema as the route checks the form first. */
export function useProductEditor() {
  const error = ref<string | null>(null)
  const fieldErrors = ref<FieldErrors>({})
  const busy = ref(false)

  async function submit(d: ProductDraft, send: (body: ReturnType<typeof bodyOfDraft>) => Promise<ProductListItem>): Promise<ProductListItem | undefined> {
    error.value = null
    const body = bodyOfDraft(d)
    const checked = productCreateSchema.safeParse(body)
    fieldErrors.value = checked.success ? {} : Object.fromEntries(checked.error.issues.map((i) => [i.path.join('.'), i.message]))
    if (!checked.success) {
      error.value = 'Check the highlighted fields.'
      return undefined
    }
    busy.value = true
    try {
      const saved = await send(body)
      await refreshNuxtData('products')
      return saved
    } catch (err) {
      const { message, code } = apiErrorOf(err)
      error.value = message
      fieldErrors.value = issuesOf(err)
      // A 409 names the field it is about: the code that is taken, or what may no longer change.
      const field = (err as { data?: { data?: { field?: unknown } } }).data?.data?.field
      if (typeof field === 'string' && (code === 'duplicate_product' || code === 'product_in_use')) fieldErrors.value = { [field]: message }
      return undefined
    } finally {
      busy.value = false
    }
  }

  // Typed by hand: inferring the route's type through submit() exceeds TypeScript's depth limit.
  const create = (d: ProductDraft) => submit(d, (body) => $fetch<ProductListItem>('/api/products', { method: 'POST', body }))
  // A plain string URL: Nitro's typed-route inference overflows on template literals.
  const save = (code: string, d: ProductDraft) => {
    const url: string = `/api/products/${encodeURIComponent(code)}`
    return submit(d, (body) => $fetch<ProductListItem>(url, { method: 'PATCH', body }))
  }

  return { error, fieldErrors, busy, create, save, clear: () => ((error.value = null), (fieldErrors.value = {})) }
}
