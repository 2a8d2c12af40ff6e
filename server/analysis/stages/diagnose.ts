/**
 * Diagnose: the unit faults read from the channels' levels and the impedance's shape.
 * - coil continuity (run before the deconvolution; an open or shorted coil stops the electrical and
 *   acoustic stages): terminal voltage over current, from the validation's sweep RMS figures;
 * - no resonance (run after the fit): an impedance with no resonance peak at all.
 * Station faults (a silent drive, a dead drive probe) were already refused by the validation; what
 * is left here is the unit.
 */
import type { SweepContext } from '../context.ts'
import { channelStat } from '../context.ts'
import { OPEN_COIL_OHM, SHORTED_COIL_OHM } from '../constants.ts'
import type { AnalysisFlags } from '../types.ts'

export const NO_RESONANCE_NOTE = 'No resonance: the impedance shows no resonance peak (a blocked cone, or no driver connected).'

/**
 * The impedance magnitude may stand this far above its minimum at the lowest frequency and still
 * count as not falling from there (our figure: a resonance below the data lifts it by 10 % or more
 * within two octaves of a driver's Fs; measurement noise stays well under 5 %).
 */
export const NOT_FALLING_RATIO = 1.05

/** Open or shorted coil from the drive and sense channels' sweep RMS; needs both channels. */
export function diagnoseCoil(ctx: SweepContext): void {
  const { params, flags, notes } = ctx
  const dStat = channelStat(ctx, 'drive')
  const sStat = channelStat(ctx, 'sense')
  if (dStat && sStat) {
    const current = sStat.sweepRmsV / ctx.senseOhm
    const zEff = current > 0 ? dStat.sweepRmsV / current : Number.POSITIVE_INFINITY
    params.effectiveImpedanceOhm = Number.isFinite(zEff) ? zEff : null
    flags.openCoil = zEff > OPEN_COIL_OHM
    flags.shortedCoil = ctx.recording.driveSilentWithCurrent || zEff < SHORTED_COIL_OHM
    if (flags.openCoil) notes.push(`Open coil: ${dStat.sweepRmsV.toFixed(3)} V RMS at the terminals but no current.`)
    if (flags.shortedCoil) notes.push(`Shorted coil: ${current.toFixed(3)} A RMS flows with ${dStat.sweepRmsV.toFixed(4)} V at the terminals.`)
  } else {
    ctx.unmeasured.push('coil_continuity')
    notes.push('Open/short detection needs both drive and sense channels.')
  }
  ctx.unitDead = flags.openCoil || flags.shortedCoil
}

/** Open or shorted coil from an impedance table: its lowest magnitude is the coil's resistance or less. */
export function diagnoseTableCoil(magOhm: readonly number[], flags: AnalysisFlags, notes: string[]): void {
  let lowestOhm = Number.POSITIVE_INFINITY
  for (const m of magOhm) lowestOhm = Math.min(lowestOhm, m)
  flags.openCoil = lowestOhm > OPEN_COIL_OHM
  flags.shortedCoil = lowestOhm < SHORTED_COIL_OHM
  if (flags.openCoil) notes.push(`Open coil: the table reads at least ${lowestOhm.toPrecision(3)} Ω at every frequency.`)
  if (flags.shortedCoil) notes.push(`Shorted coil: the table reads ${lowestOhm.toPrecision(3)} Ω at its lowest.`)
}

/**
 * No fit, no resonance withheld at the bottom of the data, and a magnitude that does not fall from
 * its lowest frequency (so no resonance lies below the data either): the impedance has no
 * resonance at all, a unit fault. Data that starts above a resonance is not this: it falls first.
 */
export function showsNoResonance(fitted: boolean, withheldNote: string | null, mag: readonly number[]): boolean {
  if (fitted || withheldNote !== null || !mag.length) return false
  let min = Number.POSITIVE_INFINITY
  for (const m of mag) min = Math.min(min, m)
  return mag[0]! <= NOT_FALLING_RATIO * min
}

/**
 * After the fit: a missing fit leaves the small-signal figures unmeasured, with the reason (the
 * resonance too low for the data, or none at all, the latter a unit fault).
 */
export function diagnoseResonance(ctx: SweepContext): void {
  const outcome = ctx.fit
  if (!outcome || outcome.fit) return
  ctx.unmeasured.push('small_signal')
  ctx.flags.noResonance = showsNoResonance(false, outcome.withheldNote, outcome.fittedMagOhm)
  ctx.notes.push(outcome.withheldNote ?? NO_RESONANCE_NOTE)
}
