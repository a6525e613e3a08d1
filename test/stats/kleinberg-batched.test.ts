import { describe, it, expect } from 'vitest'
import { batchedBursts } from '../../src/stats/kleinberg-batched.ts'
import { seededRandom } from './seeded-random.ts'

/** Exhaustive minimum-cost state sequence: an independent check of the Viterbi recursion. */
function bruteForce(mentions: number[], totals: number[], s: number, gamma: number, levels: number): { cost: number; states: number[] } {
  const base = mentions.reduce((a, b) => a + b, 0) / totals.reduce((a, b) => a + b, 0)
  const probabilities = Array.from({ length: levels }, (_, i) => base * s ** i).filter((p) => p < 1)
  const k = probabilities.length
  const n = mentions.length
  let best = { cost: Infinity, states: [] as number[] }
  const states = new Array<number>(n).fill(0)
  const total = k ** n
  for (let code = 0; code < total; code++) {
    let rest = code
    for (let t = n - 1; t >= 0; t--) {
      states[t] = rest % k
      rest = Math.floor(rest / k)
    }
    let cost = 0
    let previous = 0
    for (let t = 0; t < n; t++) {
      const state = states[t]!
      if (state > previous) cost += (state - previous) * gamma * Math.log(n)
      const p = probabilities[state]!
      if (totals[t]! > 0) cost -= mentions[t]! * Math.log(p) + (totals[t]! - mentions[t]!) * Math.log(1 - p)
      previous = state
    }
    if (cost < best.cost - 1e-9) best = { cost, states: [...states] }
  }
  return best
}

describe('batchedBursts', () => {
  it('finds the same optimal state sequence as exhaustive search (20 random cases)', () => {
    const random = seededRandom(17)
    for (let trial = 0; trial < 20; trial++) {
      const n = 6 + (trial % 3)
      const totals = Array.from({ length: n }, () => 50 + Math.floor(random.uniform() * 100))
      const spike = Math.floor(random.uniform() * n)
      const mentions = totals.map((d, t) => Math.min(d, random.poisson(d * (t === spike || t === spike + 1 ? 0.12 : 0.04))))
      const expected = bruteForce(mentions, totals, 2, 1, 3)
      const result = batchedBursts(mentions, totals, { s: 2, gamma: 1, maxLevel: 2 })
      expect(result.states).toEqual(expected.states)
    }
  })

  it('marks a jump in share as a burst and leaves a flat share alone', () => {
    const totals = new Array(24).fill(2000)
    const flat = totals.map(() => 40)
    expect(batchedBursts(flat, totals).bursts).toEqual([])
    const jump = totals.map((_, t) => (t >= 18 ? 120 : 20))
    const result = batchedBursts(jump, totals)
    expect(result.states.slice(0, 18).every((state) => state === 0)).toBe(true)
    expect(result.states.slice(18).every((state) => state >= 1)).toBe(true)
    expect(result.bursts[0]).toEqual({ level: 1, start: 18, end: 24 })
  })

  it('treats periods without documents as missing, not as zero mentions', () => {
    const totals = [100, 100, 100, 0, 0, 100, 100, 100]
    const mentions = [10, 10, 10, 0, 0, 10, 10, 10]
    const result = batchedBursts(mentions, totals)
    expect(result.baseProbability).toBeCloseTo(0.1, 12)
    expect(result.states.every((state) => state === 0)).toBe(true)
  })

  it('handles degenerate input and rejects impossible counts', () => {
    expect(batchedBursts([], []).states).toEqual([])
    expect(batchedBursts([0, 0], [10, 10]).states).toEqual([0, 0])
    expect(() => batchedBursts([5], [3])).toThrow(/mentions <= totals, period 0/)
    expect(() => batchedBursts([1, -1], [3, 3])).toThrow(/non-negative finite counts, period 1/)
    expect(() => batchedBursts([1], [3, 3])).toThrow(/one total per period/)
  })
})
