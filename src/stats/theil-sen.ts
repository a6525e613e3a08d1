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
  /** median of y (the level the slope can be compared with) */
  medianY: number
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

/**
 * k-th smallest value (0-based) of values[0..length), rearranging them in place (Hoare's quickselect
 * with median-of-three pivots): O(n) on average, so three order statistics of the ~n²/2 pairwise
 * slopes cost less than sorting them.
 */
function selectKth(values: Float64Array, length: number, k: number, from = 0, to = length - 1): number {
  let left = from
  let right = to
  while (right > left) {
    const middle = (left + right) >> 1
    // median of three to the middle
    if (values[middle]! < values[left]!) swap(values, middle, left)
    if (values[right]! < values[left]!) swap(values, right, left)
    if (values[right]! < values[middle]!) swap(values, right, middle)
    const pivot = values[middle]!
    let i = left
    let j = right
    while (i <= j) {
      while (values[i]! < pivot) i++
      while (values[j]! > pivot) j--
      if (i <= j) {
        swap(values, i, j)
        i++
        j--
      }
    }
    if (k <= j) right = j
    else if (k >= i) left = i
    else return values[k]!
  }
  return values[k]!
}

function swap(values: Float64Array, a: number, b: number): void {
  const kept = values[a]!
  values[a] = values[b]!
  values[b] = kept
}

/** Smallest value of values[from..to]. */
function minimumOf(values: Float64Array, from: number, to: number): number {
  let smallest = values[from]!
  for (let i = from + 1; i <= to; i++) if (values[i]! < smallest) smallest = values[i]!
  return smallest
}

/**
 * Value at a fractional 1-based rank of values[0..length), by linear interpolation between
 * neighbouring order statistics; after selecting order statistic k, every value above index k is at
 * least as large, so the next one is the minimum of that part.
 */
function atRank(values: Float64Array, length: number, rank: number, from: number, to: number): number {
  if (rank < 1) return -Infinity
  if (rank > length) return Infinity
  const below = Math.floor(rank)
  const fraction = rank - below
  const low = selectKth(values, length, below - 1, from, to)
  return fraction === 0 || below >= length ? low : low + fraction * (minimumOf(values, below, to) - low)
}

function medianOf(values: Float64Array, length: number): number {
  const middle = length >> 1
  const upper = selectKth(values, length, middle)
  if (length % 2 === 1) return upper
  // everything below index `middle` is at most `upper`; the lower middle is their maximum
  let lower = values[0]!
  for (let i = 1; i < middle; i++) if (values[i]! > lower) lower = values[i]!
  return 0.5 * (lower + upper)
}

// reused work arrays (a run computes one Theil–Sen slope per skill)
let slopeScratch = new Float64Array(1024)
let valueScratch = new Float64Array(64)

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
 * Cost: O(n²) (all pairs; order statistics by quickselect).
 *
 * @param x times
 * @param y values
 * @param options level of the interval (default 0.95); the Mann–Kendall Var(S) of (x, y) when the
 *   caller has it already
 * @throws RangeError with fewer than two distinct x values or mismatched lengths
 * @example
 * ```ts
 * // Sen (1968): slope 4
 * theilSen([1, 2, 3, 4, 10, 12, 18], [9, 15, 19, 20, 45, 55, 78]).slope // => 4
 * ```
 */
export function theilSen(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  options: { level?: number; mannKendallVariance?: number } = {},
): TheilSenResult {
  const level = options.level ?? 0.95
  if (!(level > 0 && level < 1)) throw new RangeError(`theilSen requires a level in (0, 1), got ${level}`)
  const n = x.length
  if (y.length !== n) throw new RangeError(`theilSen requires equal lengths, got ${n} and ${y.length}`)
  const pairs = (n * (n - 1)) / 2
  if (slopeScratch.length < pairs) slopeScratch = new Float64Array(pairs)
  const slopes = slopeScratch
  let count = 0
  for (let i = 0; i < n - 1; i++) {
    for (let j = i + 1; j < n; j++) {
      const dx = x[j]! - x[i]!
      if (dx !== 0) slopes[count++] = (y[j]! - y[i]!) / dx
    }
  }
  if (count === 0) throw new RangeError('theilSen requires at least two distinct x values')
  const slope = medianOf(slopes, count)
  if (valueScratch.length < n) valueScratch = new Float64Array(n)
  for (let i = 0; i < n; i++) valueScratch[i] = y[i]!
  const medianY = medianOf(valueScratch, n)
  for (let i = 0; i < n; i++) valueScratch[i] = x[i]!
  const intercept = medianY - slope * medianOf(valueScratch, n)
  const variance = options.mannKendallVariance ?? mannKendall(Array.from(y), Array.from(x)).variance
  const critical = normalQuantile(0.5 + level / 2) * Math.sqrt(variance)
  const lowerRank = (count - critical) / 2
  const upperRank = (count + critical) / 2 + 1
  return {
    slope,
    intercept,
    medianY,
    // the median selection left the slopes partitioned: the lower bound lies in the lower half and
    // the upper bound in the upper half, so each search covers only its half
    lower: atRank(slopes, count, lowerRank, 0, Math.min(count - 1, count >> 1)),
    upper: atRank(slopes, count, upperRank, Math.max(0, (count >> 1) - 1), count - 1),
    level,
    pairCount: count,
    lowerRank,
    upperRank,
  }
}
