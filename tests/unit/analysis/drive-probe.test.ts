/**
 * A dead drive-voltage probe is a station fault, not a shorted unit: a unit that plays is not
 * shorted. Drive silent (or collapsed with current flowing) while the microphone hears the sweep
 * at least PROBE_FAULT_MIC_SNR_DB above its noise → refused (`drive_probe_fault`, measure again);
 * the same with a silent microphone stays what it was (a shorted-coil fail, or `silent_drive`).
 * Likewise a dead current lead: no current while the microphone hears the unit → refused
 * (`sense_probe_fault`); with a silent microphone it stays an open-coil fail.
 */
import { describe, expect, it } from 'vitest'
import {
  AnalysisInputError,
  analyzeRecording,
  DEFAULT_PROFILE,
  parseWavLayout,
  PROBE_FAULT_MIC_SNR_DB,
  validateRecording,
  type AnalysisErrorCode,
} from '../../../server/analysis/index.ts'
import { DEMO_DRIVER, generateRecording, type DriverModel } from '../../../fixtures/generator.ts'

/** An invented 4 Ω-class woofer: with the demo station's 1 Ω sense resistor its current counts as flowing (sense ≥ 0.1 × level). */
const FOUR_OHM: DriverModel = { ...DEMO_DRIVER, reOhm: 3.2, qes: (DEMO_DRIVER.qes * 3.2) / DEMO_DRIVER.reOhm }

function codeOf(fn: () => unknown): AnalysisErrorCode | 'accepted' {
  try {
    fn()
    return 'accepted'
  } catch (e) {
    if (e instanceof AnalysisInputError) return e.code
    throw e
  }
}

/** The bytes of a recording with every sample of one channel set to zero (a lead that carries nothing). */
function zeroChannel(wav: Uint8Array, channel: number): Uint8Array {
  const b = Uint8Array.from(wav)
  const layout = parseWavLayout(b)
  const bytesPerSample = layout.bitsPerSample / 8
  for (let f = 0; f < layout.frames; f++) b.fill(0, layout.dataOffset + f * layout.blockAlign + channel * bytesPerSample, layout.dataOffset + f * layout.blockAlign + (channel + 1) * bytesPerSample)
  return b
}

const DRIVE = DEFAULT_PROFILE.channels.indexOf('drive')
const micSnr = (wav: Uint8Array) => validateRecording(wav, DEFAULT_PROFILE).stats.find((s) => s.role === 'mic')!.snrDb!

describe('a dead drive-voltage probe', () => {
  it('is 20 dB of microphone SNR by common practice', () => {
    expect(PROBE_FAULT_MIC_SNR_DB).toBe(20)
  })

  it('on a unit whose current counts as flowing is refused, where it was a shorted-coil fail', () => {
    const good = generateRecording({ driver: FOUR_OHM, seed: 90 })
    // The same unit with its probe intact: it plays loudly, with current flowing, and is not shorted.
    const intact = analyzeRecording(good, DEFAULT_PROFILE)
    expect(intact.flags.shortedCoil).toBe(false)
    expect(micSnr(good)).toBeGreaterThan(PROBE_FAULT_MIC_SNR_DB + 20)
    const dead = zeroChannel(good, DRIVE)
    const v = (() => {
      try {
        return validateRecording(dead, DEFAULT_PROFILE)
      } catch (e) {
        return e as AnalysisInputError
      }
    })()
    expect(v).toBeInstanceOf(AnalysisInputError)
    expect((v as AnalysisInputError).code).toBe('drive_probe_fault')
    expect((v as AnalysisInputError).message).toContain('check the drive-voltage probe and measure again')
    expect((v as AnalysisInputError).channel).toBe(DRIVE)
    // The engine never gets as far as a verdict.
    expect(codeOf(() => analyzeRecording(dead, DEFAULT_PROFILE))).toBe('drive_probe_fault')
  })

  it.each([
    ['the generator’s dead lead on a 4 Ω unit', () => generateRecording({ driver: FOUR_OHM, defect: 'dead_drive_probe', seed: 91 })],
    ['the generator’s dead lead on the demo unit (its current is under the flowing mark)', () => generateRecording({ defect: 'dead_drive_probe', seed: 92 })],
    ['zeroed drive samples of a good demo recording', () => zeroChannel(generateRecording({ seed: 93 }), DRIVE)],
  ])('%s is refused as a probe fault, not as a silent station', (_name, make) => {
    expect(codeOf(() => validateRecording(make(), DEFAULT_PROFILE))).toBe('drive_probe_fault')
  })

  it.each([
    // Sd scales the sound only (not the impedance): the microphone's SNR follows it.
    ['hears the unit 24 dB above its noise: refused', 0.006, 'drive_probe_fault'],
    ['hears it only 14 dB above its noise: stays a shorted coil', 0.002, 'accepted'],
  ] as const)('a microphone that %s', (_name, sdScale, code) => {
    const driver = { ...FOUR_OHM, sdM2: FOUR_OHM.sdM2 * sdScale }
    const snr = micSnr(generateRecording({ driver, seed: 94 }))
    expect(code === 'accepted' ? snr < PROBE_FAULT_MIC_SNR_DB : snr >= PROBE_FAULT_MIC_SNR_DB).toBe(true)
    const dead = generateRecording({ driver, defect: 'dead_drive_probe', seed: 94 })
    expect(codeOf(() => validateRecording(dead, DEFAULT_PROFILE))).toBe(code)
    if (code === 'accepted') expect(analyzeRecording(dead, DEFAULT_PROFILE).flags.shortedCoil).toBe(true)
  })
})

describe('what a silent microphone leaves as it was', () => {
  it('a shorted unit is silent: still a shorted-coil fail with a result', () => {
    const shorted = generateRecording({ defect: 'shorted_coil', seed: 24 })
    expect(micSnr(shorted)).toBeLessThan(PROBE_FAULT_MIC_SNR_DB)
    expect(analyzeRecording(shorted, DEFAULT_PROFILE).flags.shortedCoil).toBe(true)
  })

  it('a station that played nothing: still silent_drive', () => {
    expect(codeOf(() => validateRecording(generateRecording({ defect: 'silent_drive', seed: 95 }), DEFAULT_PROFILE))).toBe('silent_drive')
  })
})

const SENSE = DEFAULT_PROFILE.channels.indexOf('sense')

describe('a dead current (sense) lead', () => {
  // A unit that plays draws current: sound at the microphone with no current is the lead across the
  // sense resistor, not an open coil (an open coil is silent).
  it('on a good unit that plays is refused with sense_probe_fault, where it was an open-coil fail', () => {
    const good = generateRecording({ seed: 96 })
    expect(micSnr(good)).toBeGreaterThan(PROBE_FAULT_MIC_SNR_DB + 20)
    const dead = zeroChannel(good, SENSE)
    let error: unknown = null
    try {
      validateRecording(dead, DEFAULT_PROFILE)
    } catch (e) {
      error = e
    }
    expect(error).toBeInstanceOf(AnalysisInputError)
    expect((error as AnalysisInputError).code).toBe('sense_probe_fault')
    expect((error as AnalysisInputError).message).toContain('check the sense lead and measure again')
    expect((error as AnalysisInputError).channel).toBe(SENSE)
    expect(codeOf(() => analyzeRecording(dead, DEFAULT_PROFILE))).toBe('sense_probe_fault')
  })

  it('the generator’s dead sense lead is refused the same way', () => {
    expect(codeOf(() => validateRecording(generateRecording({ defect: 'dead_sense_probe', seed: 97 }), DEFAULT_PROFILE))).toBe('sense_probe_fault')
  })

  it('an open coil is silent: still an open-coil fail with a result', () => {
    const open = generateRecording({ defect: 'open_coil', seed: 98 })
    expect(micSnr(open)).toBeLessThan(PROBE_FAULT_MIC_SNR_DB)
    expect(analyzeRecording(open, DEFAULT_PROFILE).flags.openCoil).toBe(true)
  })

  it('a microphone that hears the unit only 14 dB above its noise leaves an open coil as it was', () => {
    const driver = { ...DEMO_DRIVER, sdM2: DEMO_DRIVER.sdM2 * 0.002 }
    const quiet = generateRecording({ driver, defect: 'dead_sense_probe', seed: 99 })
    expect(micSnr(quiet)).toBeLessThan(PROBE_FAULT_MIC_SNR_DB)
    expect(analyzeRecording(quiet, DEFAULT_PROFILE).flags.openCoil).toBe(true)
  })
})
