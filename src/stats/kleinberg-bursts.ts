/**
 * @module stats/kleinberg-bursts
 * Kleinberg's burst detection on a stream of event times (the continuous, two-state-per-level
 * exponential model): finds periods in which events arrive markedly faster than usual, nested by
 * intensity level.
 */

export interface Burst {
  /** burst level (1 = first level above the base rate) */
  level: number
  start: number
  end: number
}

export interface KleinbergResult {
  /** state per inter-arrival gap (gap i runs from offsets[i] to offsets[i+1]) */
  states: number[]
  /** maximal intervals at each level >= 1, ordered by start then level */
  bursts: Burst[]
}

/**
 * Hierarchical bursts from per-gap states: for each level ℓ >= 1, the maximal runs of gaps whose state
 * is at least ℓ, from the start of the run's first gap to the end of its last.
 *
 * @example
 * ```ts
 * burstsFromStates([0, 1, 2, 1, 0], [0, 10, 12, 13, 15, 40]) // => [{ level: 1, start: 10, end: 15 }, { level: 2, start: 12, end: 13 }]
 * ```
 */
export function burstsFromStates(states: readonly number[], boundaries: readonly number[]): Burst[] {
  const bursts: Burst[] = []
  const top = states.reduce((max, state) => Math.max(max, state), 0)
  for (let level = 1; level <= top; level++) {
    let runStart = -1
    for (let i = 0; i <= states.length; i++) {
      const inside = i < states.length && states[i]! >= level
      if (inside && runStart < 0) runStart = i
      if (!inside && runStart >= 0) {
        bursts.push({ level, start: boundaries[runStart]!, end: boundaries[i]! })
        runStart = -1
      }
    }
  }
  return bursts.sort((a, b) => a.start - b.start || a.level - b.level)
}

/**
 * Kleinberg (2002) burst detection with the infinite-state exponential automaton truncated to k
 * states: state j emits gaps at rate α_j = s^j / ĝ (ĝ = T/n the mean gap), moving up j − i levels
 * costs (j − i) γ ln n, moving down is free, and the state sequence minimising
 * Σ −ln(α_j e^{−α_j x_t}) + transition costs is found by the Viterbi algorithm. The number of states is
 * k = ⌈1 + log_s T + log_s(1 / min gap)⌉, as in the R package bursts.
 *
 * Reference: Kleinberg, Bursty and Hierarchical Structure in Streams, KDD 2002
 * (https://www.cs.cornell.edu/home/kleinber/bhs.pdf), §2.
 * Cost: O(n k²).
 *
 * @param offsets strictly increasing event times
 * @param options s > 1 (rate ratio between levels, default 2), γ > 0 (cost of moving up, default 1)
 * @throws RangeError with fewer than two events or non-increasing times
 * @example
 * ```ts
 * kleinbergBursts([0, 100, 200, 201, 202, 203, 204, 300, 400]).states // => [0, 0, 4, 4, 4, 4, 0, 0]
 * ```
 */
export function kleinbergBursts(offsets: readonly number[], options: { s?: number; gamma?: number } = {}): KleinbergResult {
  const s = options.s ?? 2
  const gamma = options.gamma ?? 1
  if (!(s > 1)) throw new RangeError(`kleinbergBursts requires s > 1, got ${s}`)
  if (!(gamma > 0)) throw new RangeError(`kleinbergBursts requires gamma > 0, got ${gamma}`)
  if (offsets.length < 2) throw new RangeError(`kleinbergBursts requires at least two events, got ${offsets.length}`)
  const gaps: number[] = []
  for (let i = 1; i < offsets.length; i++) {
    const gap = offsets[i]! - offsets[i - 1]!
    if (!(gap > 0)) throw new RangeError(`kleinbergBursts requires strictly increasing times, position ${i} has ${offsets[i]}`)
    gaps.push(gap)
  }
  const n = gaps.length
  const total = offsets[offsets.length - 1]! - offsets[0]!
  const meanGap = total / n
  const smallestGap = Math.min(...gaps)
  const stateCount = Math.max(1, Math.ceil(1 + Math.log(total) / Math.log(s) + Math.log(1 / smallestGap) / Math.log(s)))
  const rates = Array.from({ length: stateCount }, (_, j) => s ** j / meanGap)
  const upCost = gamma * Math.log(n)
  let cost = rates.map((_, j) => (j === 0 ? 0 : Infinity))
  const back: Int32Array[] = []
  for (let t = 0; t < n; t++) {
    const next = new Array<number>(stateCount)
    const from = new Int32Array(stateCount)
    for (let j = 0; j < stateCount; j++) {
      let bestCost = Infinity
      let bestState = 0
      for (let i = 0; i < stateCount; i++) {
        const candidate = cost[i]! + (j > i ? (j - i) * upCost : 0)
        if (candidate < bestCost) {
          bestCost = candidate
          bestState = i
        }
      }
      // −ln f_j(x) = α_j x − ln α_j
      next[j] = bestCost + rates[j]! * gaps[t]! - Math.log(rates[j]!)
      from[j] = bestState
    }
    back.push(from)
    cost = next
  }
  let state = 0
  for (let j = 1; j < stateCount; j++) if (cost[j]! < cost[state]!) state = j
  const states = new Array<number>(n)
  for (let t = n - 1; t >= 0; t--) {
    states[t] = state
    state = back[t]![state]!
  }
  return { states, bursts: burstsFromStates(states, offsets) }
}
