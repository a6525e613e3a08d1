import { describe, it, expect } from 'vitest'
import { emergenceIndex } from '../../src/stats/emergence.ts'

describe('emergenceIndex', () => {
  it('finds the first sustained month above the floor after a quiet stretch', () => {
    const shares = [0, 0, 0.0005, 0, 0, 0, 0, 0.004, 0.006, 0.009, 0.012]
    const mentions = shares.map((share) => Math.round(share * 2000))
    expect(emergenceIndex(shares, mentions)).toBe(7)
  })

  it('ignores a one-month spike and a dip that does not end the story', () => {
    const shares = [0, 0, 0, 0, 0, 0, 0.01, 0, 0, 0.003, 0.001, 0.001, 0.005, 0.006, 0.007]
    const mentions = shares.map((share) => Math.round(share * 2000))
    // months 6 and 9 are blips (not sustained, 2 of 12 quiet months <= a fifth); the run starts at 12
    expect(emergenceIndex(shares, mentions)).toBe(12)
    // with a third blip the history was not "near zero" any more (3 of 12 > a fifth)
    const busier = [...shares]
    busier[10] = 0.004
    expect(emergenceIndex(busier, busier.map((share) => Math.round(share * 2000)))).toBeNull()
  })

  it('returns null for a skill that was always present or never took hold', () => {
    const always = new Array(24).fill(0.05)
    expect(emergenceIndex(always, always.map((s) => s * 2000))).toBeNull()
    // a steady skill with occasional dips below the floor never "emerges"
    const dipping = Array.from({ length: 36 }, (_, t) => (t % 4 === 0 ? 0.0015 : 0.0025))
    expect(emergenceIndex(dipping, dipping.map((s) => Math.round(s * 4000)))).toBeNull()
    const never = new Array(24).fill(0.0005)
    expect(emergenceIndex(never, never.map(() => 1))).toBeNull()
  })

  it('skips missing months and requires enough mentions in thin months', () => {
    const shares = [0, 0, Number.NaN, 0, 0, 0, 0, Number.NaN, 0.01, 0.01, 0.01]
    expect(emergenceIndex(shares, [0, 0, 0, 0, 0, 0, 0, 0, 5, 5, 5])).toBe(8)
    // share above the floor from a single mention in a month of 100 documents is not support
    expect(emergenceIndex(shares, [0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1])).toBeNull()
  })

  it('needs enough history before the run', () => {
    const shares = [0, 0, 0.01, 0.01, 0.01]
    expect(emergenceIndex(shares, [0, 0, 20, 20, 20])).toBeNull()
    expect(emergenceIndex(shares, [0, 0, 20, 20, 20], { quiet: 2 })).toBe(2)
  })

  it('rejects bad options and mismatched input', () => {
    expect(() => emergenceIndex([0], [0, 1])).toThrow(/one mention count per share/)
    expect(() => emergenceIndex([0], [0], { floor: 0 })).toThrow(/positive floor/)
    expect(() => emergenceIndex([0], [0], { sustain: 0 })).toThrow(/sustain/)
  })
})
