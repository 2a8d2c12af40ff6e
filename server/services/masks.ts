import { DomainError } from '../../shared/utils/domain-error.ts'
import type { ErrorCode } from '../../shared/utils/error-codes.ts'
import type { Knex } from 'knex'
import type { MaskCandidate, MaskPreview, MaskView } from '../../shared/types/api.ts'
import { reDisagreementPct } from '../../shared/utils/coil.ts'
import { SCALAR_LIMIT_NAMES, figureValue, type MaskCreateInput, type MaskLimits } from '../../shared/utils/mask.ts'
import { MaskStateError, createMaskDraft, getActiveMask, getMaskSummary, listGolden, releaseMask, retireMask as retireReleasedMask, updateMaskDraft, type ActiveMask } from '../repos/masks.ts'
import { recordAudit } from './audit.ts'
import { getProductByCode, getProductById } from '../repos/products.ts'
import { listProfilesOfRecordings } from '../repos/stations.ts'
import { serialsOfOtherProducts } from '../repos/units.ts'
import { listLatestPerUnit, listProductResults, setFirstVerdict, type StoredResult } from '../repos/results.ts'
import { judge, type Judgement } from '../verdict/judge.ts'
import { compareSpreads, proposeMask } from '../limits/propose.ts'
import { estimateFalseRejects } from '../limits/false-reject.ts'
import { summarize } from '../stats/summary.ts'

/** A golden-unit choice the product's data cannot support. */
export const GOLDEN_ERROR_CODES = ['product_not_found', 'golden_not_measured', 'golden_wrong_product'] as const satisfies readonly ErrorCode[]
export class GoldenError extends DomainError<(typeof GOLDEN_ERROR_CODES)[number]> {}

/** A release that needs the engineer to confirm it once more. */
export const RELEASE_ERROR_CODES = ['false_reject_unconfirmed'] as const satisfies readonly ErrorCode[]
export class ReleaseRiskError extends DomainError<(typeof RELEASE_ERROR_CODES)[number]> {}

/** Production units (each one's latest result) a proposal compares the golden spread with. */
const HISTORY_UNITS = 2000
/** Known-good units a preview needs before its false-reject share stands for the mask's (else the golden model does). */
export const MIN_KNOWN_GOOD = 30

/** Largest number of units a preview lists one by one (the counts cover all). */
const PREVIEW_LIST_MAX = 500
/** Units the release gate's preview reads (each unit's latest result). */
const PREVIEW_UNITS = 2000

/** The units a mask may be built from: each unit's latest production result. */
export async function listCandidates(db: Knex, productCode: string, limit: number): Promise<MaskCandidate[]> {
  const product = await getProductByCode(db, productCode)
  if (!product) throw new GoldenError('product_not_found', `No product with code ${productCode}`)
  return (await listLatestPerUnit(db, product.id, limit)).map((r) => ({
    serial: r.serial,
    recordingId: r.recordingId,
    kind: r.kind,
    verdict: r.verdict,
    uploadedAt: r.uploadedAt.toISOString(),
    re20Ohm: r.parameters.re20Ohm ?? r.parameters.reOhm,
    fsHz: r.parameters.fsHz,
    qts: r.parameters.qts,
    sensitivityDb: r.parameters.sensitivityDb,
  }))
}

/**
 * Proposes a draft mask from golden units (each unit's latest production result) and stores it.
 * @throws GoldenError for an unknown product, a serial of another product or one never measured;
 * ProposeError (from the proposal) for too few units or bad options.
 */
export async function createMaskFromGolden(db: Knex, input: MaskCreateInput, userId: number | null): Promise<number> {
  const product = await getProductByCode(db, input.product)
  if (!product) throw new GoldenError('product_not_found', `No product with code ${input.product}`)
  const golden = await listLatestPerUnit(db, product.id, input.goldenSerials.length, input.goldenSerials)
  const found = new Set(golden.map((g) => g.serial))
  const missing = input.goldenSerials.filter((s) => !found.has(s))
  if (missing.length) {
    const elsewhere = await serialsOfOtherProducts(db, missing, product.id)
    if (elsewhere.length) throw new GoldenError('golden_wrong_product', `Not ${product.code} units: ${elsewhere.join(', ')}`)
    throw new GoldenError('golden_not_measured', `No measured result for: ${missing.join(', ')}`)
  }
  const { k, coverage, confidence, decisionRule, floorDb, fromHz, toHz, upper, lower, regions, impedanceCurve, thdBandHz } = input
  const options = { k, coverage, confidence, decisionRule, floorDb, fromHz, toHz, upper, lower, regions, impedanceCurve, thdBandHz, floors: product.limitFloors }
  const side = (s?: { k?: number; floorDb?: number }) => s && { k: s.k, floor: s.floorDb }
  const { limits, proposal } = proposeMask(golden, {
    k,
    coverage,
    confidence,
    decisionRule,
    floors: product.limitFloors,
    floorDb,
    fromHz,
    toHz,
    sweepBandHz: await sweepBandOf(db, golden),
    response: { upper: side(upper), lower: side(lower), regions: regions?.map((r) => ({ fromHz: r.fromHz, toHz: r.toHz, upper: r.upperDb, lower: r.lowerDb })) },
    impedance: impedanceCurve ?? false,
    thdBandHz,
  })
  // The golden spread against production's: units more alike than the line make false fails.
  const goldenSerials = new Set(input.goldenSerials)
  const history = (await listLatestPerUnit(db, product.id, HISTORY_UNITS)).filter((r) => !goldenSerials.has(r.serial))
  const compared = compareSpreads(golden, history, thdBandHz)
  proposal.spread = compared.spread
  proposal.warnings.push(...compared.warnings)
  return createMaskDraft(db, {
    productId: product.id,
    name: input.name || `From ${golden.length} golden units`,
    limits,
    createdBy: userId,
    options,
    proposal,
    golden: golden.map((g) => ({ unitId: g.unitId, recordingId: g.recordingId, serial: g.serial })),
  })
}

/** The sweep band the golden units were measured with (their stations' profiles), for the default curve range. */
async function sweepBandOf(db: Knex, golden: StoredResult[]): Promise<[number, number] | undefined> {
  const profiles = await listProfilesOfRecordings(db, golden.map((g) => g.recordingId))
  if (!profiles.length) return undefined
  const f1 = Math.max(...profiles.map((p) => p.sweep.f1Hz))
  const f2 = Math.min(...profiles.map((p) => p.sweep.f2Hz))
  return f2 > f1 ? [f1, f2] : undefined
}

/** Judges every never-judged production result of the product with the newly released mask. */
export async function judgeUnjudged(trx: Knex.Transaction, mask: ActiveMask, productId: number): Promise<number> {
  const product = (await getProductById(trx, productId))!
  let judged = 0
  // In batches, so a product with a long unjudged history never loads it all at once.
  for (;;) {
    const batch = await listProductResults(trx, productId, { unjudgedOnly: true, last: JUDGE_BATCH })
    for (const r of batch) await setFirstVerdict(trx, r.resultId, mask.id, judge(r, mask.limits, product.ratedImpedanceOhm))
    judged += batch.length
    if (batch.length < JUDGE_BATCH) return judged
  }
}

const JUDGE_BATCH = 500

/** A release's false-reject share (0–1) and where it comes from, as the release gate reads it. */
export interface ReleaseRisk {
  share: number
  basis: 'known_good' | 'golden_model'
  thresholdPct: number
}

/**
 * The false-reject share the release gate reads: the larger of the golden units' estimate (normal
 * model) and, when there are at least MIN_KNOWN_GOOD of them, the share of the product's known-good
 * units the draft fails. The known-good set holds the golden units and units the current mask
 * passed, so a draft much like the current mask fails none of them whatever its statistical risk;
 * the golden estimate keeps the gate from reading that as no risk.
 */
export function gateShare(known: { units: number; draftFails: number }, goldenEstimate: number): Pick<ReleaseRisk, 'share' | 'basis'> {
  const knownShare = known.units >= MIN_KNOWN_GOOD ? known.draftFails / known.units : -1
  return knownShare > goldenEstimate ? { share: knownShare, basis: 'known_good' } : { share: goldenEstimate, basis: 'golden_model' }
}

/** The release gate's share for a draft (see gateShare) and the product's threshold. */
export async function releaseRisk(db: Knex, maskId: number): Promise<ReleaseRisk> {
  const view = await getMaskView(db, maskId)
  const preview = (await previewMask(db, maskId, PREVIEW_UNITS))!
  const product = (await getProductById(db, view.productId))!
  return { ...gateShare(preview.knownGood, view.estimate.overall), thresholdPct: product.falseRejectMaxPct }
}

/** A share as people say it: "2.4 % (about 1 good unit in 42)", "80.0 % (most good units)". */
export function shareInWords(share: number): string {
  const pct = 100 * share
  const figure = `${pct < 0.1 ? pct.toFixed(2) : pct.toFixed(1)} %`
  if (share <= 0) return figure
  const oneIn = Math.round(1 / share)
  if (oneIn > 1) return `${figure} (about 1 good unit in ${oneIn})`
  return `${figure} (${share >= 0.995 ? 'all' : 'most'} good units)`
}

/**
 * Releases a draft and judges the product's never-judged results with it, in one transaction: the
 * product row the release locks stays locked while judging, so no analysis saves a result between.
 * A draft expected to reject more good units than the product's threshold is released only when
 * the engineer confirmed that figure (`confirmFalseReject`).
 * @throws ReleaseRiskError `false_reject_unconfirmed`; MaskStateError (see releaseMask).
 */
export async function releaseAndJudge(
  db: Knex,
  maskId: number,
  by: number | null,
  comment: string,
  o: { at?: Date; confirmFalseReject?: boolean } = {},
): Promise<{ version: number; judgedUnjudged: number }> {
  const risk = await releaseRisk(db, maskId)
  const over = 100 * risk.share > risk.thresholdPct
  if (over && !o.confirmFalseReject) {
    const from = risk.basis === 'known_good' ? "on this product's known-good units" : 'from its golden units'
    throw new ReleaseRiskError(
      'false_reject_unconfirmed',
      `This mask is expected to reject ${shareInWords(risk.share)} of good units (${from}), above the product's ${risk.thresholdPct} % threshold. Release again to confirm.`,
      { falseRejectPct: Number((100 * risk.share).toFixed(2)), thresholdPct: risk.thresholdPct, basis: risk.basis },
    )
  }
  return db.transaction(async (trx) => {
    const released = await releaseMask(trx, maskId, { by, comment, at: o.at })
    const detail = { product: released.productCode, version: released.version, replaced: released.replaced, falseRejectPct: Number((100 * risk.share).toFixed(2)), falseRejectBasis: risk.basis, confirmedOverThreshold: over }
    await recordAudit(trx, { userId: by, action: 'mask.release', entity: 'mask', entityId: maskId, comment, detail })
    return { version: released.version, judgedUnjudged: await judgeUnjudged(trx, released.mask, released.productId) }
  })
}

/**
 * Retires a released mask and audits it, in one transaction: the product then has no active mask.
 * @throws MaskStateError `mask_not_released`.
 */
export function retireMask(db: Knex, maskId: number, by: number | null, comment: string | null): Promise<{ version: number }> {
  return db.transaction(async (trx) => {
    const retired = await retireReleasedMask(trx, maskId, by, comment)
    await recordAudit(trx, { userId: by, action: 'mask.retire', entity: 'mask', entityId: maskId, comment, detail: { version: retired.version } })
    return retired
  })
}

/** A draft mask from golden units, as the mask page shows it. @throws what createMaskFromGolden throws. */
export async function createMask(db: Knex, input: MaskCreateInput, userId: number | null): Promise<MaskView> {
  return getMaskView(db, await createMaskFromGolden(db, input, userId))
}

/** Edits a draft's name or limits. @throws MaskStateError `unknown_mask`, `mask_not_draft`. */
export async function editMaskDraft(db: Knex, id: number, patch: Parameters<typeof updateMaskDraft>[2]): Promise<MaskView> {
  await updateMaskDraft(db, id, patch)
  return getMaskView(db, id)
}

/** A mask with its golden units' figures and curves. @throws MaskStateError `unknown_mask`. */
export async function getMaskView(db: Knex, id: number): Promise<MaskView> {
  const m = await getMaskSummary(db, id)
  if (!m) throw new MaskStateError('unknown_mask', `No mask ${id}`)
  const product = (await getProductById(db, m.productId))!
  const refs = await listGolden(db, id)
  const golden = refs.length ? await listProductResults(db, m.productId, { recordingIds: refs.map((r) => r.recordingId) }) : []
  const figures: MaskView['golden']['figures'] = {}
  for (const name of SCALAR_LIMIT_NAMES) {
    const s = summarize(golden.map((g) => figureValue(g, name, m.limits.thdBandHz)))
    if (s) figures[name] = { n: s.n, mean: s.mean, sd: s.sd }
  }
  const freqHz = golden.find((g) => g.curves.freqHz?.length)?.curves.freqHz ?? []
  const spl = golden.filter((g) => g.curves.splDb)
  const meanSplDb = spl.length ? freqHz.map((_, i) => summarize(spl.map((g) => g.curves.splDb![i]))?.mean ?? null) : null
  const expected = product.expectedRe20Ohm
  const reMean = figures.re20Ohm?.mean
  const off = expected && reMean !== undefined ? reDisagreementPct(expected, reMean) : null
  return {
    ...m,
    product: m.productCode,
    curve: m.limits.curves.splDb ?? null,
    scalars: m.limits.scalars,
    golden: {
      serials: refs.map((r) => r.serial),
      figures,
      curves: golden.map((g) => ({ serial: g.serial, recordingId: g.recordingId, splDb: g.curves.splDb, impedanceOhm: g.curves.impedanceOhm })),
      freqHz,
      meanSplDb,
    },
    proposal: m.proposal,
    estimate: estimateFalseRejects(golden, m.limits),
    expectedRe20Ohm: expected,
    reWarning:
      off !== null && Math.abs(off) > product.reWarnPct
        ? `The golden units' Re at 20 °C (${reMean!.toFixed(2)} Ω) is ${Math.abs(off).toFixed(1)} % ${off > 0 ? 'above' : 'below'} the ${expected!.toFixed(2)} Ω expected from the voice-coil description: check the wire or the description.`
        : null,
  }
}


const yieldOf = (pass: number, fail: number) => (pass + fail ? Math.round((1000 * pass) / (pass + fail)) / 10 : null)

/**
 * What a mask would do to the product's recent production results, against the active mask:
 * the yields, the units that change verdict and the checks that cause it. Nothing is written.
 */
export async function previewMask(db: Knex, maskId: number, last: number): Promise<MaskPreview | undefined> {
  const m = await getMaskSummary(db, maskId)
  if (!m) return undefined
  const product = (await getProductById(db, m.productId))!
  const active = await getActiveMask(db, m.productId)
  // Units, not results: each unit's latest production result, so a retested unit counts once.
  const results = await listLatestPerUnit(db, m.productId, last)
  const rated = product.ratedImpedanceOhm
  const failing = (j: Judgement | null) => new Set(j ? j.checks.filter((c) => !c.pass && !c.undecided).map((c) => c.name) : [])
  const draft = { pass: 0, fail: 0, retest: 0 }
  const now = { pass: 0, fail: 0, retest: 0 }
  const byCheck = new Map<string, { newFails: number; newPasses: number }>()
  const changed: MaskPreview['changed'] = []
  let changedTotal = 0
  // Known good: units whose latest result passed when judged, and the draft's golden units.
  const golden = new Set((await listGolden(db, maskId)).map((g) => g.serial))
  const knownGood = { units: 0, draftFails: 0 }
  for (const r of results) {
    const d = judge(r, m.limits as MaskLimits, rated)
    const a = active ? judge(r, active.limits, rated) : null
    if (r.verdict === 'pass' || golden.has(r.serial)) {
      knownGood.units++
      if (d.verdict === 'fail') knownGood.draftFails++
    }
    draft[d.verdict]++
    if (a) now[a.verdict]++
    const before = failing(a)
    const after = failing(d)
    for (const c of after) if (!before.has(c)) bump(byCheck, c, 'newFails')
    for (const c of before) if (!after.has(c)) bump(byCheck, c, 'newPasses')
    if (d.verdict !== (a?.verdict ?? null)) {
      changedTotal++
      const cause = [...after].filter((c) => !before.has(c))
      if (changed.length < PREVIEW_LIST_MAX) changed.push({ serial: r.serial, recordingId: r.recordingId, from: a?.verdict ?? null, to: d.verdict, checks: cause.length ? cause : [...before].filter((c) => !after.has(c)) })
    }
  }
  return {
    maskId,
    considered: results.length,
    draft: { ...draft, yieldPct: yieldOf(draft.pass, draft.fail) },
    active: active ? { maskId: active.id, version: active.version, ...now, yieldPct: yieldOf(now.pass, now.fail) } : null,
    changed: changed.sort((x, y) => changeRank(x) - changeRank(y)),
    changedTotal,
    knownGood: { ...knownGood, falseRejectPct: knownGood.units ? Number(((100 * knownGood.draftFails) / knownGood.units).toFixed(2)) : null },
    byCheck: [...byCheck.entries()].map(([check, v]) => ({ check, ...v })).sort((x, y) => y.newFails + y.newPasses - (x.newFails + x.newPasses)),
  }
}

/** Changes first as they matter at release: newly failing units, then newly passing ones, then the rest (newest first within each). */
function changeRank(c: MaskPreview['changed'][number]): number {
  if (c.to === 'fail') return 0
  if (c.to === 'pass' && c.from === 'fail') return 1
  return 2
}

function bump(map: Map<string, { newFails: number; newPasses: number }>, check: string, key: 'newFails' | 'newPasses') {
  const v = map.get(check) ?? { newFails: 0, newPasses: 0 }
  v[key]++
  map.set(check, v)
}
