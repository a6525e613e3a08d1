/**
 * @module stats/half-life
 * Demand half-life and annual growth from a log-linear rate: the figures course owners act on.
 */

export interface RateSummary {
  /** fractional change per year exp(periodsPerYear·β) − 1 */
  annualGrowth: number
  annualGrowthLower: number
  annualGrowthUpper: number
  /** periods for the share to halve, ln 2 / (−β); null unless β < 0 */
  halfLife: number | null
  /** [low, high] from β's interval; high is Infinity when the interval reaches β >= 0; null unless β < 0 */
  halfLifeInterval: [number, number] | null
}

/**
 * Half-life and annual growth from a log-linear slope β (per period) and its confidence interval.
 *
 * A share s(t) = s₀ e^{βt} halves after t½ = ln 2/(−β) periods, which is only defined for β < 0:
 * a growing or flat series never halves, so the half-life is null rather than negative or infinite.
 * Because t½ is monotone in β, the interval [β_lo, β_hi] maps to [ln 2/(−β_lo), ln 2/(−β_hi)]; when
 * β_hi >= 0 the data cannot rule out "never halves" and the upper end is Infinity.
 * Growth is exp(kβ) − 1 per year of k periods, with the interval mapped the same way.
 *
 * Reference: https://en.wikipedia.org/wiki/Half-life#Formulas_for_half-life_in_exponential_decay
 * Cost: O(1).
 *
 * @param slope β per period (e.g. per month)
 * @param lower lower confidence bound of β
 * @param upper upper confidence bound of β
 * @param periodsPerYear 12 for monthly series
 * @throws RangeError when the bounds do not bracket the estimate
 * @example
 * ```ts
 * rateSummary(-0.1, -0.12, -0.08, 12).halfLife // => 6.931471805599453 (ln 2 / 0.1)
 * ```
 */
export function rateSummary(slope: number, lower: number, upper: number, periodsPerYear = 12): RateSummary {
  if (![slope, lower, upper].every(Number.isFinite)) throw new RangeError('rateSummary requires finite slope and bounds')
  if (!(lower <= slope && slope <= upper)) throw new RangeError(`rateSummary requires lower <= slope <= upper, got ${lower}, ${slope}, ${upper}`)
  if (!(periodsPerYear > 0)) throw new RangeError(`rateSummary requires positive periodsPerYear, got ${periodsPerYear}`)
  const growth = (beta: number): number => Math.expm1(periodsPerYear * beta)
  const halving = (beta: number): number => (beta < 0 ? Math.LN2 / -beta : Infinity)
  return {
    annualGrowth: growth(slope),
    annualGrowthLower: growth(lower),
    annualGrowthUpper: growth(upper),
    halfLife: slope < 0 ? halving(slope) : null,
    halfLifeInterval: slope < 0 ? [halving(lower), halving(upper)] : null,
  }
}

/**
 * Log-linear slope per period for a given half-life (the inverse map, for simulations and demos).
 *
 * @example
 * ```ts
 * slopeForHalfLife(60) // => -0.011552453009332421 (five years in months)
 * ```
 */
export function slopeForHalfLife(halfLife: number): number {
  if (!(halfLife > 0)) throw new RangeError(`slopeForHalfLife requires a positive half-life, got ${halfLife}`)
  return -Math.LN2 / halfLife
}
