import type { MaskView } from '#shared/types/api'
import { meanCurve } from './useMaskCandidates'

/** The golden units' response and impedance curves of a mask, as chart overlays, with their means. */
export function useMaskGoldenCurves(mask: Ref<MaskView | null | undefined>) {
  return computed(() => {
    const g = mask.value?.golden
    const freqHz = g?.freqHz ?? []
    const lines = (key: 'splDb' | 'impedanceOhm') =>
      (g?.curves ?? []).flatMap((c) => (c[key] && c[key].length === freqHz.length ? [{ label: c.serial, values: c[key] }] : []))
    const spl = lines('splDb')
    const imp = lines('impedanceOhm')
    return {
      freqHz,
      spl,
      splMean: g?.meanSplDb ?? meanCurve(spl.map((l) => l.values), freqHz.length),
      imp,
      impMean: meanCurve(imp.map((l) => l.values), freqHz.length),
    }
  })
}

/** Starting half-widths when a curve limit is added by hand: ±3 dB on the response, ±10 % on |Z| (our choice). */
export const START_HALF_WIDTH = {
  splDb: () => 3,
  impedanceOhm: (mean: number) => Math.abs(mean) * 0.1,
}
