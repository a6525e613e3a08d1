/**
 * @module demo/prng
 * The demo scenario's seeded pseudo-random numbers. Everything the demo generates draws from here,
 * never from Math.random, so one seed always gives byte-identical files.
 *
 * The generator is mulberry32 (Tommy Ettinger, public domain, 2017): a 32-bit state advanced by a
 * Weyl sequence and scrambled by two multiply-xorshift rounds. Period 2^32, which is plenty for a
 * demo that draws a few tens of millions of numbers per component; every component forks its own
 * stream from (seed, name), so adding draws in one part never shifts the numbers of another.
 * Reference: https://gist.github.com/tommyettinger/46a874533244883189143505d203312c
 */

/**
 * 32-bit FNV-1a hash of a string, then the murmur3 finaliser, to derive well-mixed stream seeds.
 * FNV reference: http://www.isthe.com/chongo/tech/comp/fnv/ ; fmix32 from MurmurHash3 (public domain).
 * @example
 * deriveSeed(1, 'people') === deriveSeed(1, 'people') // => true
 */
export function deriveSeed(seed: number, name: string): number {
  let h = 0x811c9dc5
  const text = `${seed >>> 0}:${name}`
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i)
    h = Math.imul(h, 0x01000193)
  }
  h ^= h >>> 16
  h = Math.imul(h, 0x85ebca6b)
  h ^= h >>> 13
  h = Math.imul(h, 0xc2b2ae35)
  h ^= h >>> 16
  return h >>> 0
}

/** A seeded random stream (mulberry32) with the draws the demo needs. */
export class Rng {
  private state: number
  private spare: number | null = null

  constructor(seed: number) {
    this.state = seed >>> 0
  }

  /** A new independent stream named `name`, derived from `seed`. */
  static stream(seed: number, name: string): Rng {
    return new Rng(deriveSeed(seed, name))
  }

  /** Uniform in [0, 1). */
  next(): number {
    let t = (this.state = (this.state + 0x6d2b79f5) | 0)
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }

  /** Uniform integer in [0, n). */
  int(n: number): number {
    return Math.floor(this.next() * n)
  }

  /** Uniform integer in [lo, hi] (both included). */
  between(lo: number, hi: number): number {
    return lo + this.int(hi - lo + 1)
  }

  /** True with probability p. */
  chance(p: number): boolean {
    return this.next() < p
  }

  pick<T>(items: readonly T[]): T {
    if (items.length === 0) throw new Error('pick requires at least one item')
    return items[this.int(items.length)]!
  }

  /** Standard normal draw by the Box-Muller transform (the second value of each pair is kept). */
  normal(mean = 0, sd = 1): number {
    if (this.spare !== null) {
      const z = this.spare
      this.spare = null
      return mean + sd * z
    }
    let u = this.next()
    while (u <= 0) u = this.next()
    const v = this.next()
    const r = Math.sqrt(-2 * Math.log(u))
    this.spare = r * Math.sin(2 * Math.PI * v)
    return mean + sd * r * Math.cos(2 * Math.PI * v)
  }

  /** Poisson draw: Knuth's product method for small means, a rounded normal above 30. */
  poisson(mean: number): number {
    if (mean <= 0) return 0
    if (mean > 30) return Math.max(0, Math.round(this.normal(mean, Math.sqrt(mean))))
    const limit = Math.exp(-mean)
    let k = 0
    let p = this.next()
    while (p > limit) {
      k++
      p *= this.next()
    }
    return k
  }

  /** Fisher-Yates shuffle in place; returns the array. */
  shuffle<T>(items: T[]): T[] {
    for (let i = items.length - 1; i > 0; i--) {
      const j = this.int(i + 1)
      const tmp = items[i]!
      items[i] = items[j]!
      items[j] = tmp
    }
    return items
  }

  /** `k` distinct items in random order (k is capped at the number of items). */
  sample<T>(items: readonly T[], k: number): T[] {
    const copy = items.slice()
    const n = Math.min(k, copy.length)
    for (let i = 0; i < n; i++) {
      const j = i + this.int(copy.length - i)
      const tmp = copy[i]!
      copy[i] = copy[j]!
      copy[j] = tmp
    }
    return copy.slice(0, n)
  }
}

/** Draws indices in proportion to fixed weights (cumulative table and binary search, O(log n) a draw). */
export class WeightedPicker<T> {
  private readonly cumulative: Float64Array
  private readonly total: number

  constructor(
    readonly items: readonly T[],
    weights: readonly number[],
  ) {
    if (items.length === 0 || items.length !== weights.length) throw new Error('WeightedPicker requires one weight per item')
    this.cumulative = new Float64Array(weights.length)
    let sum = 0
    weights.forEach((w, i) => {
      if (!(w >= 0)) throw new Error(`WeightedPicker weight ${i} is not a non-negative number`)
      sum += w
      this.cumulative[i] = sum
    })
    if (sum <= 0) throw new Error('WeightedPicker requires a positive total weight')
    this.total = sum
  }

  index(rng: Rng): number {
    const x = rng.next() * this.total
    let lo = 0
    let hi = this.cumulative.length - 1
    while (lo < hi) {
      const mid = (lo + hi) >> 1
      if (this.cumulative[mid]! > x) hi = mid
      else lo = mid + 1
    }
    return lo
  }

  pick(rng: Rng): T {
    return this.items[this.index(rng)]!
  }
}
