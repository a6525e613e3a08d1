/**
 * @module stats/theil-sen
 * Theil–Sen (Sen's) slope: the median of all pairwise slopes, with a distribution-free confidence
 * interval from the Mann–Kendall variance. Robust to outliers and to the zero-inflated shares of
 * rare skills.
 */
import { mannKendall } from './mann-kendall.ts'
import { normalQuantile } from './normal-distribution.ts'

export interface TheilSenResult {
  slope: number
  /** Conover's intercept median(y) − slope · median(x) */
  intercept: number
  /** confidence bounds (−∞ / +∞ when the rank falls outside the available slopes) */
  lower: number
  upper: number
  level: number
  /** N′: number of pairwise slopes (pairs with distinct x) */
  pairCount: number
  /** fractional 1-based ranks M1 and M2 + 1 of the bounds */
  lowerRank: number
  upperRank: number
}

function median(sorted: Float64Array): number {
  const middle = sorted.length >> 1
  return sorted.length % 2 === 1 ? sorted[middle]! : 0.5 * (sorted[middle - 1]! + sorted[middle]!)
}

/** Value at a fractional 1-based rank, by linear interpolation between neighbouring order statistics. */
function atRank(sorted: Float64Array, rank: number): number {
  if (rank < 1) return -Infinity
  if (rank > sorted.length) return Infinity
  const below = Math.floor(rank)
  const fraction = rank - below
  const low = sorted[below - 1]!
  return fraction === 0 || below >= sorted.length ? low : low + fraction * (sorted[below]! - low)
}

/**
 * Theil–Sen slope estimate with the Gilbert (1987) confidence interval.
 *
 * Convention (chosen once for skill-tides): Gilbert's interpolated ranks. With N′ pairwise slopes
 * sorted ascending, C = z_{1−α/2} √Var(S) (Var(S) of Mann–Kendall with ties),
 * M1 = (N′ − C)/2 and M2 = (N′ + C)/2; the bounds are the slopes at ranks M1 and M2 + 1 (1-based),
 * interpolated linearly when the ranks are fractional. This is the convention EnvStats uses for the
 * USEPA (2009) examples; scipy instead rounds the ranks and gives slightly different bounds.
 *
 * Reference: Gilbert (1987), Statistical Methods for Environmental Pollution Monitoring, §16.5
 * (https://www.osti.gov/biblio/7037501); https://en.wikipedia.org/wiki/Theil%E2%80%93Sen_estimator
 * Cost: O(n² log n) (all pairs, sorted).
 *
 * @param x times
 * @param y values
 * @param options level of the interval (default 0.95)
 * @throws RangeError with fewer than two distinct x values or mismatched lengths
 * @example
 * ```ts
 * // Sen (1968): slope 4
 * theilSen([1, 2, 3, 4, 10, 12, 18], [9, 15, 19, 20, 45, 55, 78]).slope // => 4
 * ```
 */
export function theilSen(x: readonly number[], y: readonly number[], options: { level?: number } = {}): TheilSenResult {
  const level = options.level ?? 0.95
  if (!(level > 0 && level < 1)) throw new RangeError(`theilSen requires a level in (0, 1), got ${level}`)
  const n = x.length
  if (y.length !== n) throw new RangeError(`theilSen requires equal lengths, got ${n} and ${y.length}`)
  const slopes = new Float64Array((n * (n - 1)) / 2)
  let count = 0
  for (let i = 0; i < n - 1; i++) {
    for (let j = i + 1; j < n; j++) {
      const dx = x[j]! - x[i]!
      if (dx !== 0) slopes[count++] = (y[j]! - y[i]!) / dx
    }
  }
  if (count === 0) throw new RangeError('theilSen requires at least two distinct x values')
  const sorted = slopes.subarray(0, count).sort()
  const slope = median(sorted)
  const intercept = median(Float64Array.from(y).sort()) - slope * median(Float64Array.from(x).sort())
  const variance = mannKendall(y, x).variance
  const critical = normalQuantile(0.5 + level / 2) * Math.sqrt(variance)
  const lowerRank = (count - critical) / 2
  const upperRank = (count + critical) / 2 + 1
  return {
    slope,
    intercept,
    lower: atRank(sorted, lowerRank),
    upper: atRank(sorted, upperRank),
    level,
    pairCount: count,
    lowerRank,
    upperRank,
  }
}
