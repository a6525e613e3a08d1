/**
 * @module plan/random
 * Seeded pseudo-random numbers for the reskilling simulation, so that the same data and seed give the
 * same interval on every run and machine.
 *
 * - mulberry32: a 32-bit generator by Tommy Ettinger (public domain), period 2^32; plenty for a few
 *   thousand simulated paths. Reference: https://gist.github.com/tommyettinger/46a874533244883189143505d203312c
 * - FNV-1a 32-bit hash to derive a per-skill seed, so a skill's draws do not depend on which other
 *   skills are simulated. Reference: http://www.isthe.com/chongo/tech/comp/fnv/
 * - Normal deviates by the Box–Muller transform. Reference: https://en.wikipedia.org/wiki/Box%E2%80%93Muller_transform
 * - Binomial deviates by inversion (sequential search of the CDF, O(n·p) expected) while n·p is
 *   small, else by the normal approximation with continuity correction, clamped to [0, n].
 *   Reference: Devroye (1986), Non-Uniform Random Variate Generation, ch. X, http://luc.devroye.org/rnbookindex.html
 *
 * @example
 * ```ts
 * const rng = createRng(hashSeed(7, 'kubernetes'))
 * rng.uniform() // => a number in [0, 1), the same for every run
 * ```
 */

export interface Rng {
  /** uniform on [0, 1) */
  uniform(): number
  /** standard normal */
  normal(): number
  /** number of successes in n trials of probability p */
  binomial(n: number, p: number): number
}

/** FNV-1a over the seed and a text, as an unsigned 32-bit integer. */
export function hashSeed(seed: number, text: string): number {
  let h = 0x811c9dc5 ^ (seed >>> 0)
  const s = `${seed}:${text}`
  for (let i = 0; i < s.length; i++) {
    h ^= s.charCodeAt(i)
    h = Math.imul(h, 0x01000193)
  }
  return h >>> 0
}

/** A mulberry32 generator from a 32-bit seed. */
export function createRng(seed: number): Rng {
  let state = seed >>> 0
  let spare: number | null = null
  const uniform = () => {
    state = (state + 0x6d2b79f5) >>> 0
    let t = state
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
  const normal = () => {
    if (spare !== null) {
      const s = spare
      spare = null
      return s
    }
    let u = uniform()
    while (u <= Number.MIN_VALUE) u = uniform()
    const v = uniform()
    const radius = Math.sqrt(-2 * Math.log(u))
    spare = radius * Math.sin(2 * Math.PI * v)
    return radius * Math.cos(2 * Math.PI * v)
  }
  const binomial = (n: number, p: number) => {
    const trials = Math.max(0, Math.round(n))
    if (trials === 0 || p <= 0) return 0
    if (p >= 1) return trials
    // work with the smaller of p and 1-p so the search stays short
    const flip = p > 0.5
    const q = flip ? 1 - p : p
    let k: number
    if (trials * q < 30) {
      // inversion: walk up the CDF from P(0) = (1-q)^n using P(k+1)/P(k) = (n-k)/(k+1)·q/(1-q)
      const ratio = q / (1 - q)
      let prob = Math.pow(1 - q, trials)
      let cdf = prob
      const u = uniform()
      k = 0
      while (u > cdf && k < trials) {
        prob *= ((trials - k) / (k + 1)) * ratio
        cdf += prob
        k++
      }
    } else {
      const mean = trials * q
      const sd = Math.sqrt(trials * q * (1 - q))
      k = Math.min(trials, Math.max(0, Math.round(mean + sd * normal())))
    }
    return flip ? trials - k : k
  }
  return { uniform, normal, binomial }
}

/** The p-quantile of sorted values by linear interpolation (R type 7). */
export function quantileSorted(sorted: readonly number[], p: number): number {
  if (sorted.length === 0) return NaN
  const h = (sorted.length - 1) * p
  const lo = Math.floor(h)
  const hi = Math.ceil(h)
  return sorted[lo]! + (h - lo) * (sorted[hi]! - sorted[lo]!)
}
