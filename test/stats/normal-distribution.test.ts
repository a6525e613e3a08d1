import { describe, it, expect } from 'vitest'
import { normalCdf, normalPdf, normalQuantile, normalSurvival } from '../../src/stats/normal-distribution.ts'

describe('normal distribution', () => {
  it('reproduces the Mann–Kendall p-values printed for USEPA (2009) examples 17-7 and 17-6', () => {
    // CHECKS.md §2a/§2b [S]: EnvStats kendallTrendTest on USEPA 2009 Unified Guidance examples:
    // z = 2.146625 -> two-sided p = 0.03182313; z = 5.107322 -> p = 3.267574e-07
    expect(2 * normalSurvival(2.146625)).toBeCloseTo(0.03182313, 7)
    expect((2 * normalSurvival(5.107322)) / 3.267574e-7).toBeCloseTo(1, 5)
  })

  it('gives z(0.965) = 1.8119 used for the 93% Sen interval of Sen (1968)', () => {
    // CHECKS.md §3a [S + C]: C = z₀.₉₆₅ · √Var(S) = 1.8119 × 6.658
    expect(normalQuantile(0.965)).toBeCloseTo(1.8119, 4)
  })

  it('matches textbook values of Φ and Φ⁻¹', () => {
    // from memory [M]: standard normal table values, 15-16 significant digits as printed by R
    expect(normalCdf(1)).toBeCloseTo(0.8413447460685429, 14)
    expect(normalCdf(-3)).toBeCloseTo(0.0013498980316301, 15)
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 13)
    expect(normalQuantile(0.9)).toBeCloseTo(1.2815515655446004, 13)
    expect(normalQuantile(1e-10)).toBeCloseTo(-6.361340902404056, 10)
    expect(normalPdf(0)).toBeCloseTo(1 / Math.sqrt(2 * Math.PI), 15)
  })

  it('keeps relative accuracy in the far tail', () => {
    // Mills ratio bound: φ(x)/x · (1 − 1/x²) < 1 − Φ(x) < φ(x)/x (common practice, no source)
    for (const x of [6, 8, 10, 20]) {
      const tail = normalSurvival(x)
      expect(tail).toBeLessThan(normalPdf(x) / x)
      expect(tail).toBeGreaterThan((normalPdf(x) / x) * (1 - 1 / (x * x)))
    }
  })

  it('inverts the cdf across the whole range', () => {
    for (const p of [1e-300, 1e-20, 1e-5, 0.01, 0.2, 0.5, 0.7, 0.99, 1 - 1e-12]) {
      const x = normalQuantile(p)
      // compare the smaller tail area, where the relative error is meaningful
      const tail = p < 0.5 ? normalCdf(x) : normalSurvival(x)
      const target = p < 0.5 ? p : 1 - p
      expect(Math.abs(tail - target) / target).toBeLessThan(1e-9)
    }
    expect(normalQuantile(0)).toBe(-Infinity)
    expect(normalQuantile(1)).toBe(Infinity)
  })

  it('rejects probabilities outside [0, 1]', () => {
    expect(() => normalQuantile(1.2)).toThrow(/p in \[0, 1\]/)
    expect(() => normalQuantile(Number.NaN)).toThrow(/p in/)
  })
})
