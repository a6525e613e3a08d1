import { describe, it, expect } from 'vitest'
import { chiSquareCdf, chiSquareSurvival } from '../../src/stats/chi-square-distribution.ts'
import { normalQuantile, normalSurvival } from '../../src/stats/normal-distribution.ts'

describe('chi-square distribution', () => {
  it('equals the squared normal for 1 df: P(χ²₁ > z²) = 2(1 − Φ(z))', () => {
    for (const z of [0.1, 1, 1.959963984540054, 3, 6]) {
      expect(chiSquareSurvival(z * z, 1) / (2 * normalSurvival(z))).toBeCloseTo(1, 12)
    }
    expect(chiSquareSurvival(normalQuantile(0.975) ** 2, 1)).toBeCloseTo(0.05, 14)
  })

  it('has exponential tails for 2 df: P(χ²₂ > x) = e^(−x/2)', () => {
    for (const x of [0.2, 2, 10, 100]) {
      expect(chiSquareSurvival(x, 2) / Math.exp(-x / 2)).toBeCloseTo(1, 12)
      expect(chiSquareCdf(x, 2)).toBeCloseTo(-Math.expm1(-x / 2), 14)
    }
  })

  it('matches the printed 95% point for 10 df', () => {
    // from memory [M]: chi-square table, qchisq(.95, 10) = 18.30704
    expect(chiSquareSurvival(18.307038053275146, 10)).toBeCloseTo(0.05, 9)
  })

  it('handles non-positive x and rejects bad degrees of freedom', () => {
    expect(chiSquareCdf(-1, 3)).toBe(0)
    expect(chiSquareSurvival(0, 3)).toBe(1)
    expect(() => chiSquareSurvival(1, 0)).toThrow(/degrees of freedom/)
    expect(() => chiSquareCdf(Number.NaN, 2)).toThrow(/NaN/)
  })
})
