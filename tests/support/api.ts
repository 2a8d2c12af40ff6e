/** A JSON caller for API tests: method, path, optional body, as a signed-in person (by default the one `defaultWho` gives when called). */
export type ApiAnswer<T> = { status: number; body: T & { data?: { code: string; [field: string]: unknown }; message?: string } }

export function jsonApi(host: string, defaultWho: () => { cookie: string }) {
  return async function api<T>(method: string, path: string, body?: unknown, who: { cookie: string } = defaultWho()): Promise<ApiAnswer<T>> {
    const res = await fetch(new URL(path, host), {
      method,
      headers: { ...who, ...(body !== undefined ? { 'content-type': 'application/json' } : {}) },
      body: body !== undefined ? JSON.stringify(body) : undefined,
    })
    return { status: res.status, body: (await res.json()) as never }
  }
}
