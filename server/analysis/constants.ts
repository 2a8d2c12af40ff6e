/**
 * Constants more than one stage of the engine reads, each with its reason. A constant only one stage
 * reads lives in that stage's module (server/analysis/stages/).
 */

/** SPL reference pressure, 20 µPa (IEC 61672-1). */
export const REFERENCE_PRESSURE_PA = 20e-6
/** Drive for the sensitivity convention: 2.83 V RMS = 1 W into 8 Ω, referred to 1 m. */
export const REFERENCE_DRIVE_V = 2.83
export const REFERENCE_DISTANCE_M = 1
/**
 * Speed of sound in dry air: c = 331.3·√(1 + T/273.15) m/s, the ideal-gas c = √(κ·R·T) with the dry-air
 * constants of the ISO 2533 standard atmosphere (κ = 1.4, R = 287.05287 J/(kg·K)): 331.3 m/s at 0 °C,
 * 343.2 m/s at 20 °C.
 */
export function speedOfSoundMs(tempC: number): number {
  return 331.3 * Math.sqrt(1 + tempC / 273.15)
}
export const DEFAULT_SENSITIVITY_BAND_HZ: [number, number] = [300, 3000]
export const DEFAULT_THD_AT_HZ = [100, 1000, 3000]

/**
 * Top of the band the analysis reports, as a fraction of the Nyquist frequency fs/2: 0.9, i.e. 0.45·fs,
 * where common audio converters' anti-alias passband ends (common practice: their transition band
 * runs from about 0.45·fs to 0.55·fs). Above it a figure would measure the converter's roll-off
 * and its aliases, not the unit.
 */
export const ANALYSIS_NYQUIST_FRACTION = 0.9
/**
 * The highest sweep end a sample rate accepts, as a fraction of fs/2 (validation refuses a profile
 * whose f2 reaches it). Deliberately above ANALYSIS_NYQUIST_FRACTION: the sweep may run into the
 * converter's transition band because its top is never reported anyway (the analysis stops at
 * 0.9·f2 and at 0.9 of Nyquist), so the common 20 kHz sweep at 44.1 kHz (f2 at 0.907 of Nyquist) is
 * accepted and measured up to 18 kHz; a sweep to 22 kHz at 44.1 kHz (0.998) would be played
 * through the filter's cut-off and is refused.
 */
export const NYQUIST_USABLE_FRACTION = 0.95

/** Tikhonov term of the spectral division, relative to the reference's peak power (−60 dB). */
export const REGULARISATION = 1e-6
/** Length kept of the linear impulse responses; the driver's responses have died away well before. */
export const LINEAR_WINDOW_S = 0.2
/** Part of the linear window kept ahead of the impulse (converter pre-ringing). */
export const PRE_WINDOW_S = 0.002
/**
 * The harmonic responses take up the last (duration × this) of the deconvolved response: the
 * highest order the sweep can carry (f2/f1) arrives one sweep duration ahead of the linear one
 * (Farina 2000); the 3 % keep the noise window clear of its pre-ringing and of a clock that runs off
 * by up to ±200 ppm (our margin).
 */
export const HARMONIC_SPAN_MARGIN = 1.03
/** Share of each window used for its half-Hann tapers. */
export const TAPER_FRACTION = 0.2
/** Top of the usable sweep (its last fade starts near 0.93·f2 for a 1 s, 20 Hz–20 kHz sweep). */
export const USABLE_TOP_FRACTION = 0.9
/** Bottom of the usable sweep above f1 (fade-in). */
export const USABLE_BOTTOM_FACTOR = 1.1

/** Fit band: from 1.2·f1 (clear of the fade-in) to 5 kHz (where Le dominates but eddy losses are still small). */
export const FIT_LOW_FACTOR = 1.2
export const FIT_HIGH_HZ = 5000
export const FIT_POINTS_PER_OCTAVE = 48

/** Effective impedance above this is an open coil; below SHORT a shorted one (our thresholds: far outside any driver's range). */
export const OPEN_COIL_OHM = 1000
export const SHORTED_COIL_OHM = 0.5
/** A channel below this SNR is reported as noisy. */
export const LOW_SNR_DB = 30
/** A mic channel below this SNR carries no usable sound. */
export const NO_SOUND_SNR_DB = 10

/** Lowest harmonic order counted as rub and buzz. */
export const RUB_BUZZ_MIN_ORDER = 10
/** Rub-and-buzz band floor: the buzz of a rubbing coil or a loose particle lies above it. */
export const RUB_BUZZ_BAND_LOW_HZ = 1000
/** Default rub-and-buzz limit (our choice; the rationale is in docs/method.md, "Rub and buzz"). */
export const RUB_BUZZ_LIMIT_DB = -50
