/**
 * @module stats/kleinberg-batched
 * Kleinberg's burst detection for batched data: in each period, r of d documents mention a term;
 * a burst is a run of periods in which the mention probability is a multiple of its usual value.
 * This is the variant skill-tides runs on monthly counts (mentions of a skill among all postings).
 */
import { burstsFromStates } from './kleinberg-bursts.ts'
import type { Burst } from './kleinberg-bursts.ts'
import { slabInt32 } from './typed-slab.ts'

export interface BatchedBurstOptions {
  /** ratio between successive levels' probabilities (default 2) */
  s?: number
  /** cost of moving up one level, in units of ln(number of periods) (default 1) */
  gamma?: number
  /** highest level considered (default 4); levels whose probability would reach 1 are dropped */
  maxLevel?: number
}

export interface BatchedBurstResult {
  /** state per period (0 = base rate) */
  states: number[]
  /** base probability p₀ = Σr / Σd */
  baseProbability: number
  /** intervals of periods (start index inclusive, end index exclusive) at each level */
  bursts: Burst[]
}

/**
 * Batched burst detection (Kleinberg 2002, §4 "enumerating bursts" for documents arriving in
 * batches): state i has mention probability p_i = p₀ sⁱ; the cost of period t in state i is
 * −ln[p_iʳ (1 − p_i)^{d−r}] (the binomial coefficient is the same in every state and is left out);
 * moving up j − i levels costs (j − i) γ ln n; the cheapest state sequence is found by Viterbi.
 * Periods with d = 0 (no documents: missing, not zero) cost nothing in any state.
 *
 * Reference: Kleinberg, Bursty and Hierarchical Structure in Streams, KDD 2002
 * (https://www.cs.cornell.edu/home/kleinber/bhs.pdf), §4.
 * Cost: O(n k²).
 *
 * @param mentions r_t, documents mentioning the term per period
 * @param totals d_t, all documents per period
 * @throws RangeError on mismatched lengths, negative counts or r > d
 * @example
 * ```ts
 * batchedBursts([2, 3, 2, 12, 14, 3], [100, 100, 100, 100, 100, 100]).states // => [0, 0, 0, 1, 1, 0]
 * ```
 */
export function batchedBursts(
  mentions: ArrayLike<number>,
  totals: ArrayLike<number>,
  options: BatchedBurstOptions = {},
): BatchedBurstResult {
  const s = options.s ?? 2
  const gamma = options.gamma ?? 1
  const maxLevel = options.maxLevel ?? 4
  if (!(s > 1)) throw new RangeError(`batchedBursts requires s > 1, got ${s}`)
  if (!(gamma > 0)) throw new RangeError(`batchedBursts requires gamma > 0, got ${gamma}`)
  const n = mentions.length
  if (totals.length !== n) throw new RangeError(`batchedBursts requires one total per period, got ${totals.length} and ${n}`)
  let mentionSum = 0
  let totalSum = 0
  for (let t = 0; t < n; t++) {
    const r = mentions[t]!
    const d = totals[t]!
    if (!(d >= 0) || !(r >= 0) || !Number.isFinite(d) || !Number.isFinite(r)) {
      throw new RangeError(`batchedBursts requires non-negative finite counts, period ${t} has ${r} of ${d}`)
    }
    if (r > d) throw new RangeError(`batchedBursts requires mentions <= totals, period ${t} has ${r} of ${d}`)
    mentionSum += r
    totalSum += d
  }
  const baseProbability = totalSum > 0 ? mentionSum / totalSum : 0
  // period boundaries 0..n (a plain loop: Array.from with a mapping function is the slow generic path)
  const emptyBoundaries = new Array<number>(n + 1)
  for (let t = 0; t <= n; t++) emptyBoundaries[t] = t
  if (n === 0 || baseProbability === 0 || baseProbability === 1) {
    return { states: new Array<number>(n).fill(0), baseProbability, bursts: burstsFromStates([], emptyBoundaries) }
  }
  const probabilities: number[] = []
  for (let level = 0; level <= maxLevel; level++) {
    const p = baseProbability * s ** level
    if (p >= 1) break
    probabilities.push(p)
  }
  const k = probabilities.length
  const logP = probabilities.map(Math.log)
  const logQ = probabilities.map((p) => Math.log1p(-p))
  const upCost = gamma * Math.log(Math.max(2, n))
  let cost = new Float64Array(k).fill(Infinity)
  cost[0] = 0
  let next = new Float64Array(k)
  // back pointers of all periods in one array: back[t·k + j] is the best predecessor of state j at t
  const back = slabInt32(n * k)
  for (let t = 0; t < n; t++) {
    const r = mentions[t]!
    const d = totals[t]!
    for (let j = 0; j < k; j++) {
      let bestCost = Infinity
      let bestState = 0
      for (let i = 0; i < k; i++) {
        const candidate = cost[i]! + (j > i ? (j - i) * upCost : 0)
        if (candidate < bestCost) {
          bestCost = candidate
          bestState = i
        }
      }
      next[j] = bestCost - (d > 0 ? r * logP[j]! + (d - r) * logQ[j]! : 0)
      back[t * k + j] = bestState
    }
    const swap = cost
    cost = next
    next = swap
  }
  let state = 0
  for (let j = 1; j < k; j++) if (cost[j]! < cost[state]!) state = j
  const states = new Array<number>(n)
  for (let t = n - 1; t >= 0; t--) {
    states[t] = state
    state = back[t * k + state]!
  }
  return { states, baseProbability, bursts: burstsFromStates(states, emptyBoundaries) }
}
