/**
 * @module curves/change-point
 * Detects one change in a skill's demand slope (steady, then declining ten months ago) with the
 * segmented Poisson regression, on the stacked sources.
 */
import { hingeScores, segmentedPoisson } from '../stats/segmented-poisson.ts'
import type { TrendFit } from './trend-model.ts'
import { slabFloat64Copy } from '../stats/typed-slab.ts'

export interface ChangeEvidence {
  /** grid position after which the slope changes */
  breakpoint: number
  /** search-corrected p-value (Davies' bound) */
  pValue: number
  /** plain F-test p-value at the chosen breakpoint */
  pValueAtBreak: number
  /** below the configured alpha (the fit-skill step may still reject it for want of confirmation) */
  significant: boolean
  /** slopes per month before and after the break (null when the change was not significant: not fitted) */
  slopeBefore: number | null
  slopeAfter: number | null
  candidates: number
}

/**
 * Search for one breakpoint in the slope of the skill's trend.
 *
 * The sources' level differences and the month-of-year terms are taken from the fitted linear trend
 * and held fixed in the offset (a profile approximation), so the search runs on one intercept, one
 * slope and the hinge (t − τ)₊ for every candidate τ; the caller refits the chosen τ with all terms
 * free. Breakpoints are searched among the latest `windowMonths` months (a change older than that is
 * history, and the search correction grows with every candidate). A change is significant when the
 * search-corrected p-value is below alpha.
 *
 * @returns null when there are fewer than 2 · minSegment observed months
 * @example
 * ```ts
 * detectChange(linearFit, { minSegment: 6, alpha: 0.01, windowMonths: 24 })?.breakpoint
 * ```
 */
export function detectChange(linearFit: TrendFit, options: { minSegment: number; alpha: number; windowMonths: number }): ChangeEvidence | null {
  const observations = linearFit.observations
  let distinct = 0
  for (let i = 0; i < observations.rows; i++) if (i === 0 || observations.position[i]! > observations.position[i - 1]!) distinct++
  if (distinct < 2 * options.minSegment) return null
  const coefficients = linearFit.glm.coefficients
  const cols = linearFit.columns.length
  const rows = observations.rows
  const design = linearFit.design
  const offset = slabFloat64Copy(observations.logTotal)
  // everything but the first source's intercept and the slope goes into the offset; the other
  // sources' intercepts count relative to the first source's
  for (let j = 1; j < cols; j++) {
    if (j === linearFit.slopeColumn) continue
    const coefficient = coefficients[j]!
    for (let i = 0; i < rows; i++) offset[i]! += design[j * rows + i]! * coefficient
  }
  for (let i = 0; i < rows; i++) if (observations.source[i]! > 0) offset[i]! -= coefficients[0]!
  const lastPosition = observations.position[observations.rows - 1]!
  const earliestBreak = lastPosition - options.windowMonths
  // the score process needs only the no-break fit; the breakpoint is fitted only when the
  // search-corrected test says there is a change worth fitting
  const dispersion = linearFit.glm.residualDf > 0 && linearFit.glm.dispersion > 0 ? linearFit.glm.dispersion : 1
  const scores = hingeScores({
    times: observations.position,
    counts: observations.counts,
    fitted: linearFit.glm.fitted,
    dispersion,
    minSegment: options.minSegment,
    earliestBreak,
  })
  if (scores.pValueAdjusted >= options.alpha) {
    let top = scores.profile[0]!
    for (const entry of scores.profile) if (Math.abs(entry.score) > Math.abs(top.score)) top = entry
    return {
      breakpoint: top.breakpoint,
      pValue: scores.pValueAdjusted,
      pValueAtBreak: Number.NaN,
      significant: false,
      slopeBefore: null,
      slopeAfter: null,
      candidates: scores.profile.length,
    }
  }
  const search = segmentedPoisson({
    times: observations.position,
    counts: observations.counts,
    offset,
    minSegment: options.minSegment,
    earliestBreak,
    linearStart: [coefficients[0]!, coefficients[linearFit.slopeColumn]!],
  })
  return {
    breakpoint: search.breakpoint,
    pValue: search.pValueAdjusted,
    pValueAtBreak: search.pValue,
    significant: search.pValueAdjusted < options.alpha,
    slopeBefore: search.slopeBefore.estimate,
    slopeAfter: search.slopeAfter.estimate,
    candidates: search.candidates,
  }
}
