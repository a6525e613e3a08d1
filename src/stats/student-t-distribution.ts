/**
 * @module stats/student-t-distribution
 * Student's t distribution: density, cumulative distribution, two-sided p-value and quantile,
 * used for Wald tests and intervals of regression coefficients with an estimated scale.
 */
import { logGamma } from './log-gamma.ts'
import { regularizedBeta } from './incomplete-beta.ts'
import { normalQuantile } from './normal-distribution.ts'

function checkDegreesOfFreedom(name: string, degreesOfFreedom: number): void {
  if (!(degreesOfFreedom > 0)) throw new RangeError(`${name} requires positive degrees of freedom, got ${degreesOfFreedom}`)
}

/**
 * Density of Student's t with ν degrees of freedom.
 *
 * @example
 * ```ts
 * studentTPdf(0, 1) // => 0.3183098861837907 (= 1/π, the Cauchy density at 0)
 * ```
 */
export function studentTPdf(t: number, degreesOfFreedom: number): number {
  checkDegreesOfFreedom('studentTPdf', degreesOfFreedom)
  const nu = degreesOfFreedom
  const logDensity =
    logGamma((nu + 1) / 2) - logGamma(nu / 2) - 0.5 * Math.log(nu * Math.PI) - ((nu + 1) / 2) * Math.log1p((t * t) / nu)
  return Math.exp(logDensity)
}

/**
 * Upper tail P(T > t) of Student's t with ν degrees of freedom.
 *
 * Uses P(|T| > t) = I_{ν/(ν+t²)}(ν/2, 1/2); for small t the complementary form
 * 1 − I_{t²/(ν+t²)}(1/2, ν/2) avoids forming 1 − x for x close to 1.
 * Reference: https://en.wikipedia.org/wiki/Student%27s_t-distribution#Cumulative_distribution_function
 * Cost: O(1) (one incomplete beta).
 *
 * @example
 * ```ts
 * studentTSurvival(1, 1) // => 0.25 (Cauchy: 1/2 − atan(1)/π)
 * ```
 */
export function studentTSurvival(t: number, degreesOfFreedom: number): number {
  checkDegreesOfFreedom('studentTSurvival', degreesOfFreedom)
  if (Number.isNaN(t)) return NaN
  if (t === Infinity) return 0
  if (t === -Infinity) return 1
  const nu = degreesOfFreedom
  const tSquared = t * t
  const twoSided = tSquared < nu
    ? 1 - regularizedBeta(tSquared / (nu + tSquared), 0.5, nu / 2)
    : regularizedBeta(nu / (nu + tSquared), nu / 2, 0.5)
  return t >= 0 ? 0.5 * twoSided : 1 - 0.5 * twoSided
}

/**
 * Cumulative distribution P(T ≤ t) of Student's t.
 *
 * @example
 * ```ts
 * studentTCdf(2.228138851986274, 10) // => 0.975
 * ```
 */
export function studentTCdf(t: number, degreesOfFreedom: number): number {
  return studentTSurvival(-t, degreesOfFreedom)
}

/**
 * Two-sided p-value P(|T| ≥ |t|) of a t statistic.
 *
 * @example
 * ```ts
 * studentTTwoSidedP(2.228138851986274, 10) // => 0.05
 * ```
 */
export function studentTTwoSidedP(t: number, degreesOfFreedom: number): number {
  return Math.min(1, 2 * studentTSurvival(Math.abs(t), degreesOfFreedom))
}

/**
 * Quantile of Student's t with ν degrees of freedom.
 *
 * Closed forms for ν = 1 (Cauchy, tan(π(p − 1/2))) and ν = 2 ((2p−1)/√(2p(1−p))); otherwise Newton
 * steps on the cdf from the normal quantile, kept inside a shrinking bracket (bisection when a
 * step leaves it), which converges for any ν > 0.
 * Reference: https://en.wikipedia.org/wiki/Student%27s_t-distribution (special cases ν = 1, 2).
 * Cost: O(1) cdf evaluations (about 5 to 10).
 *
 * @param p probability in (0, 1)
 * @example
 * ```ts
 * studentTQuantile(0.975, 1) // => 12.706204736174694
 * ```
 */
export function studentTQuantile(p: number, degreesOfFreedom: number): number {
  checkDegreesOfFreedom('studentTQuantile', degreesOfFreedom)
  // fits ask for the same few quantiles (levels 0.8/0.95, a handful of residual df) thousands of
  // times per run; the function is pure, so remember recent answers
  const key = `${p}|${degreesOfFreedom}`
  const cached = quantileCache.get(key)
  if (cached !== undefined) return cached
  const value = computeQuantile(p, degreesOfFreedom)
  if (quantileCache.size >= QUANTILE_CACHE_LIMIT) quantileCache.clear()
  quantileCache.set(key, value)
  return value
}

const QUANTILE_CACHE_LIMIT = 4096
const quantileCache = new Map<string, number>()

function computeQuantile(p: number, degreesOfFreedom: number): number {
  if (!(p >= 0 && p <= 1)) throw new RangeError(`studentTQuantile requires p in [0, 1], got ${p}`)
  if (p === 0) return -Infinity
  if (p === 1) return Infinity
  if (p === 0.5) return 0
  if (degreesOfFreedom === 1) return Math.tan(Math.PI * (p - 0.5))
  if (degreesOfFreedom === 2) return (2 * p - 1) / Math.sqrt(2 * p * (1 - p))
  // solve in the upper half and mirror, so the tail area is always computed directly
  const upper = p > 0.5 ? 1 - p : p
  const sign = p > 0.5 ? 1 : -1
  let x = -normalQuantile(upper)
  let low = 0
  let high = Infinity
  for (let iteration = 0; iteration < 100; iteration++) {
    const error = studentTSurvival(x, degreesOfFreedom) - upper
    if (error > 0) low = x
    else high = x
    if (Math.abs(error) <= 1e-15 * upper) break
    let next = x + error / studentTPdf(x, degreesOfFreedom)
    if (!(next > low && next < high)) next = Number.isFinite(high) ? 0.5 * (low + high) : 2 * x + 1
    if (Math.abs(next - x) <= 1e-15 * Math.abs(x)) {
      x = next
      break
    }
    x = next
  }
  return sign * x
}
