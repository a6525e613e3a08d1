/**
 * @module curves/state
 * The lifecycle state of a skill from its fitted evidence, with the thresholds of the `curves`
 * config section:
 *
 * - insufficient-evidence: fewer than `minMonths` observed months or `minMentions` mentions, or no
 *   established trend and a growth interval too wide to call the skill steady;
 * - rising / declining: the current trend's Benjamini–Hochberg-adjusted p-value is below `q`, the
 *   Mann–Kendall test confirms its direction (one-sided, at level `mannKendallAlpha`), and the change
 *   is at least `minAnnualChange` per year;
 * - emerging: rising, and the skill rose from near zero within the last `emergence.windowMonths`;
 * - fading: declining, and its fitted latest share is below `fadingShare`;
 * - steady: not rising or declining, with the growth interval inside ±`steadyBand` per year; a skill
 *   that was steady at the last fit stays steady inside ±`steadyBand` × (1 + `steadyHysteresis`), so
 *   that an interval at the band's edge does not flip the state on every run (hysteresis: one
 *   threshold to become steady, a wider one to stop being steady).
 */
import type { CurvesConfig } from './config.ts'

export const SKILL_STATES = ['emerging', 'rising', 'steady', 'declining', 'fading', 'insufficient-evidence'] as const
export type SkillState = (typeof SKILL_STATES)[number]

export interface StateEvidence {
  /** null when the data were too thin to fit; the reason says why */
  insufficientReason: string | null
  annualGrowth: number | null
  growthLower: number | null
  growthUpper: number | null
  /** raw p-value of the current trend and its BH adjustment across skills */
  pValue: number | null
  pAdjusted: number | null
  mannKendall: { s: number; pValue: number } | null
  /** months between emergence and the latest month, or null if the skill did not emerge */
  monthsSinceEmergence: number | null
  fittedLatestShare: number | null
}

export interface StateDecision {
  state: SkillState
  /** one sentence of evidence for people and for the skill.state-changed event */
  reason: string
  /** true when the trend passed all three checks (BH, Mann–Kendall, size) */
  flagged: boolean
}

const percent = (x: number): string => `${(100 * x).toFixed(Math.abs(x) < 0.1 ? 1 : 0)}%`
const pText = (p: number): string => (p < 0.0001 ? p.toExponential(1) : p.toPrecision(2))

/**
 * Decide a skill's lifecycle state from its evidence.
 *
 * @example
 * ```ts
 * classifyState({ annualGrowth: -0.2, growthLower: -0.3, growthUpper: -0.1, pValue: 1e-6, pAdjusted: 1e-5,
 *   mannKendall: { s: -300, pValue: 1e-5 }, monthsSinceEmergence: null, fittedLatestShare: 0.04,
 *   insufficientReason: null }, DEFAULT_CURVES_CONFIG).state // => 'declining'
 * ```
 */
export function classifyState(evidence: StateEvidence, config: CurvesConfig, previous: string | null = null): StateDecision {
  if (evidence.insufficientReason !== null) return { state: 'insufficient-evidence', reason: evidence.insufficientReason, flagged: false }
  const { annualGrowth, growthLower, growthUpper, pAdjusted, mannKendall } = evidence
  if (annualGrowth === null || growthLower === null || growthUpper === null || pAdjusted === null) {
    return { state: 'insufficient-evidence', reason: 'no trend could be fitted', flagged: false }
  }
  const direction = Math.sign(annualGrowth)
  const interval = `${percent(annualGrowth)} a year (interval ${percent(growthLower)} to ${percent(growthUpper)})`
  const regressionSignificant = pAdjusted < config.q
  // the regression sets the direction; Mann–Kendall confirms it with a one-sided test that way
  const mannKendallOneSided = mannKendall === null ? 1 : Math.sign(mannKendall.s) === direction && direction !== 0 ? mannKendall.pValue / 2 : 1 - mannKendall.pValue / 2
  const mannKendallAgrees = mannKendall !== null && mannKendallOneSided < config.mannKendallAlpha
  const largeEnough = Math.abs(annualGrowth) >= config.minAnnualChange
  const flagged = regressionSignificant && mannKendallAgrees && largeEnough
  if (flagged) {
    const tests = `adjusted p ${pText(pAdjusted)} < q ${config.q}, Mann–Kendall agrees (one-sided p ${pText(mannKendallOneSided)})`
    if (direction > 0) {
      const emerged = evidence.monthsSinceEmergence
      if (emerged !== null && emerged < config.emergence.windowMonths) {
        return { state: 'emerging', reason: `rose from near zero ${emerged} months ago and grows ${interval}; ${tests}`, flagged }
      }
      return { state: 'rising', reason: `share grows ${interval}; ${tests}`, flagged }
    }
    const latest = evidence.fittedLatestShare
    if (latest !== null && latest < config.fadingShare) {
      return { state: 'fading', reason: `share falls ${interval} and is down to ${percent(latest)} of documents (below ${percent(config.fadingShare)}); ${tests}`, flagged }
    }
    return { state: 'declining', reason: `share falls ${interval}; ${tests}`, flagged }
  }
  const inside = (band: number) => growthLower >= -band && growthUpper <= band
  const within = inside(config.steadyBand)
  const kept = !within && previous === 'steady' && inside(config.steadyBand * (1 + config.steadyHysteresis))
  if (within || kept || (regressionSignificant && mannKendallAgrees && !largeEnough)) {
    const why = regressionSignificant && mannKendallAgrees && !largeEnough ? `a trend smaller than ${percent(config.minAnnualChange)} a year` : 'no established trend'
    const stays = kept && why === 'no established trend' ? `; still steady: the interval is inside ±${percent(config.steadyBand * (1 + config.steadyHysteresis))}, the band a steady skill keeps (±${percent(config.steadyBand)} to become steady)` : ''
    return { state: 'steady', reason: `${why}: ${interval}${stays}`, flagged: false }
  }
  const missing = !regressionSignificant ? `adjusted p ${pText(pAdjusted)} >= q ${config.q}` : 'Mann–Kendall does not agree'
  return { state: 'insufficient-evidence', reason: `trend not established (${missing}) and the interval is wider than ±${percent(config.steadyBand)} a year: ${interval}`, flagged: false }
}
