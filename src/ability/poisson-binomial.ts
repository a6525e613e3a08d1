/**
 * @module ability/poisson-binomial
 * The Poisson-binomial distribution: the number of successes among independent trials with
 * different success probabilities p_i. Used for the number of people who truly meet a requirement
 * when each meets it with probability Φ((θ̂_i − θreq)/SE_i).
 *
 * Mean Σp_i, variance Σp_i(1 − p_i). The exact distribution comes from the recursion
 * f_i(k) = f_{i−1}(k)(1 − p_i) + f_{i−1}(k − 1) p_i (O(n²)); above `exactLimit` trials a normal
 * approximation with continuity correction is used (O(n)).
 * Reference: https://en.wikipedia.org/wiki/Poisson_binomial_distribution.
 */
import { normalQuantile } from './normal.ts'

/**
 * Exact probability mass function, index k = number of successes.
 *
 * @example poissonBinomialPmf([0.5, 0.5]) // => [0.25, 0.5, 0.25]
 */
export function poissonBinomialPmf(probabilities: ArrayLike<number>): Float64Array {
  const n = probabilities.length
  const pmf = new Float64Array(n + 1)
  pmf[0] = 1
  for (let i = 0; i < n; i++) {
    const p = probabilities[i]
    for (let k = i + 1; k >= 1; k--) pmf[k] = pmf[k] * (1 - p) + pmf[k - 1] * p
    pmf[0] *= 1 - p
  }
  return pmf
}

/**
 * Central interval [low, high] of the number of successes with probability at least `level`:
 * low is the smallest k with F(k) ≥ (1 − level)/2 and high the smallest k with F(k) ≥ (1 + level)/2.
 *
 * @example poissonBinomialInterval(new Array(20).fill(0.5), 0.95) // => [6, 14] (the binomial quantiles)
 */
export function poissonBinomialInterval(probabilities: ArrayLike<number>, level = 0.95, exactLimit = 2000): [number, number] {
  if (!(level > 0 && level < 1)) throw new RangeError(`interval level must be between 0 and 1 (got ${level})`)
  const n = probabilities.length
  if (n === 0) return [0, 0]
  const lowerTail = (1 - level) / 2
  const upperTail = (1 + level) / 2
  if (n <= exactLimit) {
    const pmf = poissonBinomialPmf(probabilities)
    let cumulative = 0
    let low = -1
    let high = n
    for (let k = 0; k <= n; k++) {
      cumulative += pmf[k]
      if (low < 0 && cumulative >= lowerTail - 1e-12) low = k
      if (cumulative >= upperTail - 1e-12) {
        high = k
        break
      }
    }
    return [Math.max(low, 0), high]
  }
  let mean = 0
  let variance = 0
  for (let i = 0; i < n; i++) {
    mean += probabilities[i]
    variance += probabilities[i] * (1 - probabilities[i])
  }
  const z = normalQuantile(upperTail)
  const sd = Math.sqrt(variance)
  const low = Math.max(0, Math.ceil(mean - z * sd - 0.5))
  const high = Math.min(n, Math.floor(mean + z * sd + 0.5))
  return [low, high]
}
