/**
 * @module stats/mann-kendall
 * Mann–Kendall nonparametric test for a monotonic trend, with tie correction and continuity
 * correction. It needs no distributional assumption, which makes it the robust companion of the
 * Poisson trend regression: a skill is flagged only when both agree.
 */
import { normalSurvival } from './normal-distribution.ts'

export interface MannKendallResult {
  /** number of observations */
  n: number
  /** S = Σ_{i<j} sign(t_j − t_i) sign(y_j − y_i) */
  s: number
  /** Var(S) with tie corrections */
  variance: number
  /** Kendall's τ_a = S / (n(n−1)/2) (the convention EnvStats reports) */
  tau: number
  /** (S − sign S)/√Var(S), with the continuity correction */
  z: number
  /** two-sided p-value from the normal approximation */
  pValue: number
}

let tieScratch = new Float64Array(64)
const NO_TIES: readonly [number, number, number] = [0, 0, 0]

/** Σ t(t−1)(2t+5), Σ t(t−1)(t−2) and Σ t(t−1) over groups of tied values. */
function tieSums(values: ArrayLike<number>): [number, number, number] {
  if (tieScratch.length < values.length) tieScratch = new Float64Array(values.length)
  const sorted = tieScratch.subarray(0, values.length)
  for (let i = 0; i < values.length; i++) sorted[i] = values[i]!
  if (sorted.length <= 96) {
    // insertion sort: for a few dozen months it beats the native typed-array sort several times over
    for (let i = 1; i < sorted.length; i++) {
      const value = sorted[i]!
      let j = i - 1
      while (j >= 0 && sorted[j]! > value) {
        sorted[j + 1] = sorted[j]!
        j--
      }
      sorted[j + 1] = value
    }
  } else sorted.sort()
  let sumA = 0
  let sumB = 0
  let sumC = 0
  let start = 0
  for (let i = 1; i <= sorted.length; i++) {
    if (i === sorted.length || sorted[i] !== sorted[start]) {
      const t = i - start
      if (t > 1) {
        sumA += t * (t - 1) * (2 * t + 5)
        sumB += t * (t - 1) * (t - 2)
        sumC += t * (t - 1)
      }
      start = i
    }
  }
  return [sumA, sumB, sumC]
}

/**
 * Mann–Kendall trend test of values y against times t (default 1, 2, …, n).
 *
 * Var(S) = [n(n−1)(2n+5) − Σu(u−1)(2u+5) − Σv(v−1)(2v+5)]/18
 *        + [Σu(u−1)(u−2)][Σv(v−1)(v−2)]/[9n(n−1)(n−2)] + [Σu(u−1)][Σv(v−1)]/[2n(n−1)],
 * with u the sizes of tied groups in y and v in t (the last two terms vanish without time ties).
 * Z = (S − sign S)/√Var(S).
 *
 * Reference: USEPA (2009) Unified Guidance, §17.3.2 (https://archive.epa.gov/epawaste/hazard/web/pdf/unified-guid.pdf);
 * variance with ties in both variables as in the EnvStats kendallTrendTest help, eq. (9).
 * Cost: O(n²) for S, O(n log n) for the ties.
 *
 * @param values observations y (finite)
 * @param times optional times t, same length (ties allowed)
 * @throws RangeError on mismatched lengths or non-finite values
 * @example
 * ```ts
 * // USEPA 2009 Example 17-7 (sodium): S = 25, Var = 125, z = 2.146625, p = 0.0318
 * mannKendall([56, 53, 51, 55, 52, 60, 62, 59, 61, 63]).z // => 2.1466252583997982
 * ```
 */
export function mannKendall(values: ArrayLike<number>, times?: ArrayLike<number>): MannKendallResult {
  const n = values.length
  if (times && times.length !== n) throw new RangeError(`mannKendall requires one time per value, got ${times.length} and ${n}`)
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(values[i]!)) throw new RangeError(`mannKendall requires finite values, position ${i} has ${values[i]}`)
    if (times && !Number.isFinite(times[i]!)) throw new RangeError(`mannKendall requires finite times, position ${i} has ${times[i]}`)
  }
  // strictly increasing times (the usual case: one value per month) order every pair like the
  // positions do, so S needs only the value signs
  let increasing = true
  if (times) for (let i = 1; i < n && increasing; i++) if (!(times[i]! > times[i - 1]!)) increasing = false
  let s = 0
  if (increasing) {
    for (let i = 0; i < n - 1; i++) {
      const yi = values[i]!
      // sign(y_j − y_i) from the comparisons' 0/1 values, without branches: the signs of a noisy
      // series are unpredictable and a mispredicted branch per pair cost twice the loop itself
      for (let j = i + 1; j < n; j++) {
        const yj = values[j]!
        s += +(yj > yi) - +(yj < yi)
      }
    }
  } else {
    for (let i = 0; i < n - 1; i++) {
      const yi = values[i]!
      const ti = times![i]!
      for (let j = i + 1; j < n; j++) s += Math.sign(times![j]! - ti) * Math.sign(values[j]! - yi)
    }
  }
  if (n < 2) return { n, s: 0, variance: 0, tau: Number.NaN, z: 0, pValue: 1 }
  const valueTies = tieSums(values)
  const timeTies = times && !increasing ? tieSums(times) : NO_TIES
  const valueTiesA = valueTies[0]
  const valueTiesB = valueTies[1]
  const valueTiesC = valueTies[2]
  const timeTiesA = timeTies[0]
  const timeTiesB = timeTies[1]
  const timeTiesC = timeTies[2]
  let variance = (n * (n - 1) * (2 * n + 5) - valueTiesA - timeTiesA) / 18
  if (n > 2) variance += (valueTiesB * timeTiesB) / (9 * n * (n - 1) * (n - 2))
  variance += (valueTiesC * timeTiesC) / (2 * n * (n - 1))
  const z = variance > 0 ? (s - Math.sign(s)) / Math.sqrt(variance) : 0
  return {
    n,
    s,
    variance,
    tau: s / ((n * (n - 1)) / 2),
    z,
    pValue: variance > 0 ? Math.min(1, 2 * normalSurvival(Math.abs(z))) : 1,
  }
}
