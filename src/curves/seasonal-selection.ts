/**
 * @module curves/seasonal-selection
 * Chooses how many month-of-year (Fourier) terms a skill's trend regression carries, by the
 * quasi-likelihood information criterion QAIC.
 */
import { RankDeficientError } from '../stats/householder-qr.ts'
import { quasiAic } from '../stats/poisson-glm.ts'
import { poissonScoreTest } from '../stats/score-test.ts'
import { buildDesign, fitTrend } from './trend-model.ts'
import type { StackedObservations, TrendFit } from './trend-model.ts'

export interface SeasonalChoice {
  harmonics: number
  fit: TrendFit
  /** QAIC of every candidate that could be fitted (empty when seasonal terms were not considered) */
  candidates: { harmonics: number; qaic: number }[]
  /** ĉ used by QAIC: the dispersion of the largest candidate */
  dispersion: number | null
  /** true when the score screen showed no candidate could win, so none was fitted */
  screenedOut: boolean
  /** why the first seasonal candidate that could not be fitted failed (null when none failed) */
  failedCandidate?: string | null
}

/** Share of the QAIC penalty a candidate's score statistic must reach to be worth fitting. */
const SCREEN_FRACTION = 0.9

/**
 * Fit the linear trend with 0, 1, …, maxHarmonics Fourier pairs for the month of year and keep the
 * one with the smallest QAIC = −2 ln L/ĉ + 2(k + 1), ĉ the Pearson dispersion of the largest model
 * (Burnham & Anderson's advice for a candidate set under overdispersion). K pairs of sin/cos terms at
 * frequencies k/12 are the smooth version of month dummies (6 pairs would equal 11 dummies).
 * Seasonal terms are only considered with at least `minMonths` observed months (two years by default).
 * Before fitting, Rao's score statistic of each candidate's terms at the linear fit screens out
 * skills where no candidate could reach the QAIC penalty (most skills: no seasonal pattern), so
 * those need one fit, not three.
 *
 * Reference: Burnham & Anderson (2002) §2.5 (QAIC, from memory); Fourier terms for seasonality:
 * FPP3 §7.4 (https://otexts.com/fpp3/useful-predictors.html#fourier-series).
 * Cost: O(maxHarmonics · IRLS fit).
 *
 * @example
 * ```ts
 * chooseSeasonalTerms(observations, { mode: 'auto', maxHarmonics: 2, minMonths: 24, observedMonths: 36 }).harmonics // => 0, 1 or 2
 * ```
 */
export function chooseSeasonalTerms(
  observations: StackedObservations,
  options: { mode: 'auto' | 'off'; maxHarmonics: number; minMonths: number; observedMonths: number },
): SeasonalChoice {
  const linear = fitTrend(observations, { harmonics: 0, breakpoint: null })
  if (options.mode === 'off' || options.observedMonths < options.minMonths) {
    return { harmonics: 0, fit: linear, candidates: [], dispersion: null, screenedOut: false }
  }
  // screen: K harmonics can only win if 2ΔlnL/ĉ exceeds the penalty 4K; the score statistic S_K
  // approximates 2ΔlnL from the linear fit alone, so when S_K/φ̂ stays below 0.9 · 4K for every K,
  // the linear model is kept without fitting any seasonal candidate
  const maxHarmonics = Math.min(5, options.maxHarmonics)
  const base = { design: linear.design, cols: linear.columns.length }
  const seasonalColumns = buildDesign(observations, { harmonics: maxHarmonics, breakpoint: null })
  const dispersion0 = Number.isFinite(linear.glm.dispersion) && linear.glm.dispersion > 0 ? linear.glm.dispersion : 1
  let worthFitting = false
  for (let k = 1; k <= maxHarmonics && !worthFitting; k++) {
    const extra = seasonalColumns.design.subarray(base.cols * observations.rows, (base.cols + 2 * k) * observations.rows)
    let score: { statistic: number }
    try {
      score = poissonScoreTest({
        design: base.design,
        rows: observations.rows,
        cols: base.cols,
        fitted: linear.glm.fitted,
        counts: observations.counts,
        extra,
        extraCols: 2 * k,
        dispersion: dispersion0,
      })
    } catch (error) {
      // a screen that cannot be computed on thin data: keep the linear trend and say why
      const reason = `score screen for ${k} harmonic${k > 1 ? 's' : ''}: ${error instanceof Error ? error.message : String(error)}`
      return { harmonics: 0, fit: linear, candidates: [], dispersion: null, screenedOut: false, failedCandidate: reason }
    }
    if (score.statistic >= SCREEN_FRACTION * 4 * k) worthFitting = true
  }
  if (!worthFitting) return { harmonics: 0, fit: linear, candidates: [], dispersion: null, screenedOut: true }
  const fits: TrendFit[] = [linear]
  let failedCandidate: string | null = null
  for (let k = 1; k <= Math.min(5, options.maxHarmonics); k++) {
    try {
      // warm start: the previous model's coefficients and zero for the new pair
      const previous = fits[fits.length - 1]!.glm.coefficients
      const start = new Float64Array(previous.length + 2)
      start.set(previous)
      fits.push(fitTrend(observations, { harmonics: k, breakpoint: null }, start))
    } catch (error) {
      // too few distinct months for the terms (rank deficiency) is expected and silent; any other
      // numerical failure on thin data ends the candidate list too, and is reported
      if (!(error instanceof RankDeficientError)) failedCandidate = `${k} harmonic${k > 1 ? 's' : ''}: ${error instanceof Error ? error.message : String(error)}`
      break
    }
  }
  const largest = fits[fits.length - 1]!
  const dispersion = Number.isFinite(largest.glm.dispersion) ? largest.glm.dispersion : 1
  const candidates = fits.map((fit) => ({
    harmonics: fit.spec.harmonics,
    qaic: quasiAic(fit.glm.logLikelihood, fit.columns.length, dispersion),
  }))
  let best = 0
  for (let i = 1; i < candidates.length; i++) if (candidates[i]!.qaic < candidates[best]!.qaic) best = i
  return { harmonics: candidates[best]!.harmonics, fit: fits[best]!, candidates, dispersion, screenedOut: false, failedCandidate }
}
