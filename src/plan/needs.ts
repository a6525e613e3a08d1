/**
 * @module plan/needs
 * The needs score: what to train next. Per skill (and per role × skill) four transparent parts, each
 * on a fixed scale that does not depend on the other skills, combined as a weighted sum:
 *
 *   score = w_momentum·momentum + w_gap·gap + w_exposure·exposure + w_pull·internalPull
 *
 * - **momentum** (−1..1): g = log2((F + f)/(L + f)) with F the forecast share in 12 months and L the
 *   share the forecast starts from (the curve's fitted share at its latest month, on the forecast's
 *   own scale; the raw latest share when no fitted value is recorded) and f the share floor
 *   (config `needs.shareFloor`), so a
 *   skill starting from nothing stays finite. The ratio is squashed as g/(1 + |g|): a doubling scores
 *   0.5, a quadrupling 0.67, a halving −0.5, no change 0. When the curve's adjusted p-value is above
 *   `needs.alpha` (or unknown) it is multiplied by `needs.insignificantDiscount`.
 * - **gap** (0..1): (expected gap + u·unknown)/headcount over the roles that require the skill, from
 *   the coverage table: the expected number of assessed people below the requirement, plus the
 *   unassessed people counted separately at weight u (`needs.unknownWeight`), per person in those roles.
 * - **exposure** (0..1): headcount of the roles that require the skill or are going to (suggested
 *   requirements, see role-suggestions.ts), as a fraction of all people.
 * - **internalPull** (−1..1): the trend of internal requests: r = log2((R + f)/(E + f)) squashed as
 *   above, with R and E the shares of internal requests mentioning the skill in the latest
 *   `needs.pullMonths` months and in the same number of months before.
 *
 * A part that cannot be computed (no curve, no role requires the skill, no requests) is null and adds
 * nothing; it is named in the notes. Skills whose curve is missing or of insufficient evidence are
 * listed after every evidenced skill, never above one.
 */
import type { CoverageRecord } from '../db/plan.ts'
import type { PlanConfig } from './config.ts'
import type { SkillCurve } from './curve-model.ts'

export type PartName = 'momentum' | 'gap' | 'exposure' | 'internalPull'
export const PART_NAMES: readonly PartName[] = ['momentum', 'gap', 'exposure', 'internalPull']

export interface ScorePart {
  /** the part on its own scale, null when it cannot be computed */
  value: number | null
  weight: number
  /** weight × value (0 when the value is null) */
  contribution: number
  /** the figures the part was computed from */
  inputs: Record<string, number | string | boolean | null>
}

/** Shares of internal requests mentioning the skill in the recent and the earlier window. */
export interface PullInput {
  recentMentions: number
  recentTotal: number
  earlierMentions: number
  earlierTotal: number
}

export interface NeedInput {
  id: string
  label: string
  curve: SkillCurve | null
  /** coverage rows of the roles counted (all roles requiring the skill, or the one role) */
  coverage: readonly CoverageRecord[]
  /** headcount of roles that require the skill now */
  requiredHeadcount: number
  /** headcount of roles that are going to require it (suggested, not yet written down) */
  futureHeadcount: number
  /** all people */
  totalHeadcount: number
  pull: PullInput | null
}

export interface NeedScore {
  id: string
  label: string
  evidenced: boolean
  score: number
  parts: Record<PartName, ScorePart>
  notes: string[]
}

export interface RankedNeed extends NeedScore {
  rank: number
}

type NeedsSettings = Pick<PlanConfig, 'weights' | 'needs'>

/** x/(1+|x|): monotone, odd, bounded to (−1, 1). */
export function squash(x: number): number {
  return x / (1 + Math.abs(x))
}

function part(value: number | null, weight: number, inputs: ScorePart['inputs']): ScorePart {
  return { value, weight, contribution: value === null ? 0 : weight * value, inputs }
}

/** The momentum part from a curve (null without a usable curve). */
export function momentumPart(curve: SkillCurve | null, cfg: NeedsSettings): ScorePart {
  const w = cfg.weights.momentum
  if (!curve || !curve.evidenced || curve.baseShare === null || curve.forecastShare12 === null) {
    return part(null, w, { latestShare: curve?.latestShare ?? null, forecastShare12: curve?.forecastShare12 ?? null, state: curve?.state ?? null })
  }
  const f = cfg.needs.shareFloor
  const latest = Math.max(curve.baseShare, 0)
  const forecast = Math.max(curve.forecastShare12, 0)
  const growthLog2 = Math.log2((forecast + f) / (latest + f))
  const significant = curve.pAdjusted !== null && curve.pAdjusted <= cfg.needs.alpha
  const factor = significant ? 1 : cfg.needs.insignificantDiscount
  return part(factor * squash(growthLog2), w, {
    state: curve.state,
    latestShare: curve.latestShare,
    baseShare: curve.baseShare,
    forecastShare12: curve.forecastShare12,
    growthLog2,
    pAdjusted: curve.pAdjusted,
    significant,
    factor,
  })
}

/** The supply-gap part from the coverage rows of the roles that require the skill. */
export function gapPart(coverage: readonly CoverageRecord[], cfg: NeedsSettings): ScorePart {
  const w = cfg.weights.gap
  let headcount = 0
  let expectedGap = 0
  let unknown = 0
  let gapLow = 0
  let gapHigh = 0
  for (const c of coverage) {
    headcount += c.headcount
    expectedGap += Math.max(c.expected_gap, 0)
    unknown += Math.max(c.unknown, 0)
    gapLow += c.gap_low
    gapHigh += c.gap_high
  }
  const inputs = { headcount, expectedGap, gapLow, gapHigh, unknown, unknownWeight: cfg.needs.unknownWeight }
  if (headcount <= 0) return part(null, w, inputs)
  const value = Math.min(1, (expectedGap + cfg.needs.unknownWeight * unknown) / headcount)
  return part(value, w, inputs)
}

/** The exposure part: people in roles requiring (or going to require) the skill per person. */
export function exposurePart(requiredHeadcount: number, futureHeadcount: number, totalHeadcount: number, cfg: NeedsSettings): ScorePart {
  const w = cfg.weights.exposure
  const inputs = { requiredHeadcount, futureHeadcount, totalHeadcount }
  if (totalHeadcount <= 0) return part(null, w, inputs)
  return part(Math.min(1, (requiredHeadcount + futureHeadcount) / totalHeadcount), w, inputs)
}

/** The internal-pull part from request shares in two windows (null without requests in both). */
export function pullPart(pull: PullInput | null, cfg: NeedsSettings): ScorePart {
  const w = cfg.weights.internalPull
  if (!pull || pull.recentTotal <= 0 || pull.earlierTotal <= 0) {
    return part(null, w, { recentMentions: pull?.recentMentions ?? null, recentTotal: pull?.recentTotal ?? null, earlierMentions: pull?.earlierMentions ?? null, earlierTotal: pull?.earlierTotal ?? null })
  }
  const f = cfg.needs.shareFloor
  const recentShare = pull.recentMentions / pull.recentTotal
  const earlierShare = pull.earlierMentions / pull.earlierTotal
  const trendLog2 = Math.log2((recentShare + f) / (earlierShare + f))
  return part(squash(trendLog2), w, { ...pull, recentShare, earlierShare, trendLog2 })
}

/** Scores one skill (or one role × skill). */
export function scoreNeed(input: NeedInput, cfg: NeedsSettings): NeedScore {
  const parts: Record<PartName, ScorePart> = {
    momentum: momentumPart(input.curve, cfg),
    gap: gapPart(input.coverage, cfg),
    exposure: exposurePart(input.requiredHeadcount, input.futureHeadcount, input.totalHeadcount, cfg),
    internalPull: pullPart(input.pull, cfg),
  }
  const score = PART_NAMES.reduce((sum, name) => sum + parts[name].contribution, 0)
  const evidenced = input.curve !== null && input.curve.evidenced
  const notes: string[] = []
  if (!input.curve) notes.push('no demand curve: not ranked among evidenced skills')
  else if (!input.curve.evidenced) notes.push('insufficient demand evidence: not ranked among evidenced skills')
  if (parts.gap.value === null) notes.push(input.requiredHeadcount > 0 ? 'no coverage figures yet for the roles requiring it' : 'no role requires it')
  if (parts.exposure.value === null) notes.push('no people imported')
  if (parts.internalPull.value === null) notes.push('no internal requests in one of the two windows')
  if (parts.momentum.inputs['significant'] === false) notes.push(`trend not significant (adjusted p ${fmtP(input.curve?.pAdjusted ?? null)}): momentum discounted`)
  return { id: input.id, label: input.label, evidenced, score, parts, notes }
}

function fmtP(p: number | null): string {
  return p === null ? 'unknown' : p < 0.001 ? '< 0.001' : p.toFixed(3)
}

const TIE = 1e-12

/**
 * Orders scores (evidenced first, then by score, then id) and ranks them with competition ranking:
 * equal scores in the same evidence group share a rank, the next rank skips ("1, 2, 2, 4").
 */
export function rankNeeds(scores: readonly NeedScore[]): RankedNeed[] {
  const sorted = [...scores].sort((a, b) => {
    if (a.evidenced !== b.evidenced) return a.evidenced ? -1 : 1
    if (Math.abs(a.score - b.score) > TIE) return b.score - a.score
    return a.id < b.id ? -1 : a.id > b.id ? 1 : 0
  })
  const out: RankedNeed[] = []
  sorted.forEach((s, i) => {
    const prev = out[i - 1]
    const tied = prev !== undefined && prev.evidenced === s.evidenced && Math.abs(prev.score - s.score) <= TIE
    out.push({ ...s, rank: tied ? prev.rank : i + 1 })
  })
  return out
}
