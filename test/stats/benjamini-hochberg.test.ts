import { describe, it, expect } from 'vitest'
import { benjaminiHochberg } from '../../src/stats/benjamini-hochberg.ts'
import { seededRandom } from './seeded-random.ts'
import { normalSurvival } from '../../src/stats/normal-distribution.ts'

// Benjamini & Hochberg (1995) worked example, the 15 p-values of the Neuhaus et al. trial:
// CHECKS.md §5, verified in scipy's false_discovery_control docstring and statsmodels tests [S]
const PAPER_P_VALUES = [
  0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.324, 0.4262, 0.5719, 0.6528, 0.759, 1.0,
]
const PAPER_ADJUSTED = [
  0.0015, 0.003, 0.0095, 0.035625, 0.0603, 0.06385714, 0.06385714, 0.0645, 0.0765, 0.486, 0.58118182, 0.714875,
  0.75323077, 0.81321429, 1.0,
]

describe('benjaminiHochberg', () => {
  it('rejects 4 of the 15 p-values at q = 0.05 (Benjamini & Hochberg 1995)', () => {
    const result = benjaminiHochberg(PAPER_P_VALUES, 0.05)
    expect(result.rejections).toBe(4)
    expect(result.rejected.slice(0, 4)).toEqual([true, true, true, true])
    expect(result.rejected.slice(4).some(Boolean)).toBe(false)
    expect(result.threshold).toBe(0.0095)
  })

  it('gives the adjusted p-values printed in the scipy docstring', () => {
    const result = benjaminiHochberg(PAPER_P_VALUES, 0.05)
    result.adjusted.forEach((value, i) => expect(value).toBeCloseTo(PAPER_ADJUSTED[i]!, 7))
  })

  it('rejects 9 at q = 0.10 (CHECKS.md §5 [C]) and works in any input order', () => {
    expect(benjaminiHochberg(PAPER_P_VALUES, 0.1).rejections).toBe(9)
    const shuffledOrder = [14, 3, 7, 0, 11, 5, 9, 1, 13, 2, 8, 6, 12, 4, 10]
    const shuffled = shuffledOrder.map((i) => PAPER_P_VALUES[i]!)
    const result = benjaminiHochberg(shuffled, 0.05)
    shuffledOrder.forEach((original, position) => expect(result.adjusted[position]).toBeCloseTo(PAPER_ADJUSTED[original]!, 7))
    expect(result.rejections).toBe(4)
  })

  it('keeps the false discovery proportion near or below q on simulated mixtures', () => {
    // 100 seeded runs of 900 uniform nulls and 100 strong signals (z shifted by 3.5)
    const random = seededRandom(11)
    let proportionSum = 0
    const runs = 100
    for (let run = 0; run < runs; run++) {
      const p: number[] = []
      for (let i = 0; i < 900; i++) p.push(random.uniform())
      for (let i = 0; i < 100; i++) {
        const z = 3.5 + random.normal()
        p.push(Math.min(1, 2 * normalSurvival(Math.abs(z))))
      }
      const result = benjaminiHochberg(p, 0.05)
      const falseRejections = result.rejected.slice(0, 900).filter(Boolean).length
      proportionSum += result.rejections > 0 ? falseRejections / result.rejections : 0
    }
    // expected FDR = q · m0/m = 0.045
    expect(proportionSum / runs).toBeLessThan(0.06)
  })

  it('passes NaN through uncounted and rejects invalid input', () => {
    const result = benjaminiHochberg([0.01, Number.NaN, 0.02], 0.05)
    expect(Number.isNaN(result.adjusted[1]!)).toBe(true)
    expect(result.adjusted[0]).toBeCloseTo(0.02, 12)
    expect(result.rejected).toEqual([true, false, true])
    expect(benjaminiHochberg([], 0.05).rejections).toBe(0)
    expect(() => benjaminiHochberg([0.5, 1.2])).toThrow(/position 1/)
    expect(() => benjaminiHochberg([0.5], 0)).toThrow(/q in/)
  })
})
