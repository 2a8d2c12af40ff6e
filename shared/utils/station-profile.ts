import { z } from 'zod'

// A station's calibration: the engine reads recordings with it (server/analysis imports this file
// explicitly, so it stays free of Nuxt), and the station editor fills its form from the same
// defaults and rules.

/** Channel roles a station can record, in file order. */
export const CHANNEL_ROLES = ['mic', 'drive', 'sense'] as const
export type ChannelRole = (typeof CHANNEL_ROLES)[number]

export const sweepSchema = z.object({
  f1Hz: z.number().positive('Sweep start (f1Hz) must be above 0 Hz'),
  f2Hz: z.number().positive('Sweep end (f2Hz) must be above 0 Hz'),
  durationS: z.number().positive('Sweep length (durationS) must be above 0 s').max(60, 'Sweep length (durationS) must be at most 60 s'),
  preSilenceS: z.number().min(0, 'Silence before the sweep (preSilenceS) cannot be negative').max(10, 'Silence before the sweep (preSilenceS) must be at most 10 s'),
  levelVrms: z.number().positive('Drive level (levelVrms) must be above 0 V RMS'),
})

/** Demo defaults (the audio band in one second, at half a watt into 8 Ω): 20 Hz–20 kHz, 1.0 s, 0.05 s pre-silence, 2.0 V RMS. */
export const DEFAULT_SWEEP = {
  f1Hz: 20,
  f2Hz: 20_000,
  durationS: 1.0,
  preSilenceS: 0.05,
  levelVrms: 2.0,
} as const satisfies z.input<typeof sweepSchema>

export const stationProfileSchema = z
  .object({
    channels: z.array(z.enum(CHANNEL_ROLES)).min(1).max(3).default(['mic', 'drive', 'sense']),
    fullScaleV: z.array(z.number().positive('Each full-scale voltage (fullScaleV) must be above 0 V')).min(1).max(3).default([1, 20, 2]),
    micSensitivityVPerPa: z.number().positive('Microphone sensitivity (micSensitivityVPerPa) must be above 0 V/Pa').default(0.02),
    micDistanceM: z.number().positive('Microphone distance (micDistanceM) must be above 0 m').default(0.1),
    senseResistorOhm: z.number().positive('Sense resistor (senseResistorOhm) must be above 0 Ω').default(1.0),
    sweep: sweepSchema.default({ ...DEFAULT_SWEEP }),
  })
  .superRefine((p, ctx) => {
    if (new Set(p.channels).size !== p.channels.length) {
      ctx.addIssue({ code: 'custom', path: ['channels'], message: 'each channel role may appear once' })
    }
    if (p.fullScaleV.length !== p.channels.length) {
      ctx.addIssue({ code: 'custom', path: ['fullScaleV'], message: 'one full-scale voltage per channel' })
    }
    if (!(p.sweep.f2Hz > p.sweep.f1Hz)) {
      ctx.addIssue({ code: 'custom', path: ['sweep', 'f2Hz'], message: 'f2Hz must be above f1Hz' })
    }
    if (!p.channels.includes('mic') && !p.channels.includes('sense')) {
      ctx.addIssue({ code: 'custom', path: ['channels'], message: 'a profile needs a mic or a sense channel' })
    }
  })

export type StationProfile = z.output<typeof stationProfileSchema>
export type StationProfileInput = z.input<typeof stationProfileSchema>

/** Demo station: full scale 1 V / 20 V / 2 V, 0.02 V/Pa at 0.10 m, 1.0 Ω sense resistor. */
export const DEFAULT_PROFILE: StationProfile = Object.freeze(stationProfileSchema.parse({})) as StationProfile
