import type { StationToken, StationView } from '#shared/types/api'
import { DEFAULT_PROFILE, type StationProfile } from '#shared/utils/station-profile'
import type { ProfileDraft } from '../components/station/StationProfileForm.vue'

const list = (s: string) => s.split(/[,\s]+/).filter(Boolean)

/** The form's text and numbers for a profile; a new station starts from the engine's defaults. */
export function draftOf(p: StationProfile = DEFAULT_PROFILE): ProfileDraft {
  return {
    channels: p.channels.join(', '),
    fullScaleV: p.fullScaleV.join(', '),
    micSensitivityVPerPa: p.micSensitivityVPerPa,
    micDistanceM: p.micDistanceM,
    senseResistorOhm: p.senseResistorOhm,
    f1Hz: p.sweep.f1Hz,
    f2Hz: p.sweep.f2Hz,
    durationS: p.sweep.durationS,
    preSilenceS: p.sweep.preSilenceS,
    levelVrms: p.sweep.levelVrms,
  }
}

/** The profile a draft describes, as typed: the server checks it with stationProfileSchema and names each refusal. */
export function profileOf(d: ProfileDraft) {
  return {
    channels: list(d.channels),
    fullScaleV: list(d.fullScaleV).map(Number),
    micSensitivityVPerPa: d.micSensitivityVPerPa,
    micDistanceM: d.micDistanceM,
    senseResistorOhm: d.senseResistorOhm,
    sweep: { f1Hz: d.f1Hz, f2Hz: d.f2Hz, durationS: d.durationS, preSilenceS: d.preSilenceS, levelVrms: d.levelVrms },
  } satisfies Record<keyof StationProfile, unknown>
}

/** Create, edit (a new profile version) and token rotation for the Stations page. */
export function useStationEditor() {
  const { busy, error, run: act } = useAction()
  const issued = ref<{ name: string; token: string } | null>(null)

  async function run<T>(fn: () => Promise<T>): Promise<T | undefined> {
    let out: T | undefined
    await act(async () => {
      out = await fn()
      await refreshNuxtData('stations')
    })
    return out
  }

  const create = (name: string, line: string, draft: ProfileDraft) =>
    run(async () => {
      // Typed by hand: inferring a POST route's type inside a callback can exceed TypeScript's depth limit.
      const r = await $fetch<StationToken>('/api/stations', { method: 'POST', body: { name, line, profile: profileOf(draft) } })
      issued.value = { name, token: r.token }
      return r
    })
  // Plain string URLs: Nitro's typed-route inference overflows on template literals.
  const save = (id: number, draft: ProfileDraft) => {
    const url: string = `/api/stations/${id}`
    return run(() => $fetch<StationView>(url, { method: 'PATCH', body: { profile: profileOf(draft) } }))
  }
  const rotate = (s: StationView) =>
    run(async () => {
      const url: string = `/api/stations/${s.id}/token`
      const r = await $fetch<StationToken>(url, { method: 'POST' })
      issued.value = { name: s.name, token: r.token }
    })

  return { error, busy, issued, create, save, rotate, newDraft: () => draftOf() }
}
