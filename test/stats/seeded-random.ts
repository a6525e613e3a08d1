/**
 * @module test/stats/seeded-random
 * Deterministic random numbers for simulation tests (mulberry32 uniform, Box–Muller normal,
 * Knuth / normal-approximation Poisson, gamma–Poisson negative binomial). Test helper only.
 */

/** mulberry32: small seeded 32-bit generator (public domain; common practice, no source). */
export function seededUniform(seed: number): () => number {
  let state = seed >>> 0
  return () => {
    state = (state + 0x6d2b79f5) >>> 0
    let t = state
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

export interface SeededRandom {
  uniform(): number
  normal(): number
  poisson(mean: number): number
  /** gamma-distributed with the given shape and scale (Marsaglia–Tsang) */
  gamma(shape: number, scale: number): number
  /** negative binomial as a gamma–Poisson mixture: mean μ, variance μ + μ²/size */
  negativeBinomial(mean: number, size: number): number
  binomial(trials: number, probability: number): number
}

export function seededRandom(seed: number): SeededRandom {
  const uniform = seededUniform(seed)
  const normal = (): number => {
    let u = uniform()
    while (u === 0) u = uniform()
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform())
  }
  const poisson = (mean: number): number => {
    if (mean <= 0) return 0
    if (mean > 60) return Math.max(0, Math.round(mean + Math.sqrt(mean) * normal()))
    // Knuth's multiplication method
    const limit = Math.exp(-mean)
    let count = 0
    let product = uniform()
    while (product > limit) {
      count++
      product *= uniform()
    }
    return count
  }
  const gamma = (shape: number, scale: number): number => {
    if (shape < 1) return gamma(shape + 1, scale) * uniform() ** (1 / shape)
    const d = shape - 1 / 3
    const c = 1 / Math.sqrt(9 * d)
    for (;;) {
      let x: number
      let v: number
      do {
        x = normal()
        v = 1 + c * x
      } while (v <= 0)
      v = v * v * v
      const u = uniform()
      if (u < 1 - 0.0331 * x ** 4 || Math.log(u) < 0.5 * x * x + d * (1 - v + Math.log(v))) return d * v * scale
    }
  }
  const negativeBinomial = (mean: number, size: number): number => poisson(gamma(size, mean / size))
  const binomial = (trials: number, probability: number): number => {
    if (trials * probability > 30 && trials * (1 - probability) > 30) {
      const value = Math.round(trials * probability + Math.sqrt(trials * probability * (1 - probability)) * normal())
      return Math.min(trials, Math.max(0, value))
    }
    let count = 0
    for (let i = 0; i < trials; i++) if (uniform() < probability) count++
    return count
  }
  return { uniform, normal, poisson, gamma, negativeBinomial, binomial }
}
