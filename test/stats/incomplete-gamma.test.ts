import { describe, it, expect } from 'vitest'
import { regularizedGammaP, regularizedGammaQ } from '../../src/stats/incomplete-gamma.ts'

/** Poisson cdf by direct summation: P(X ≤ k) for X ~ Poisson(λ), an independent check of Q(k+1, λ). */
function poissonCdfBySum(k: number, lambda: number): number {
  let term = Math.exp(-lambda)
  let sum = term
  for (let i = 1; i <= k; i++) {
    term *= lambda / i
    sum += term
  }
  return sum
}

describe('regularized incomplete gamma', () => {
  it('gives 1 − e^−x for a = 1 (exponential distribution, exact identity)', () => {
    for (const x of [0.001, 0.5, 1, 2, 5, 30]) {
      expect(regularizedGammaP(1, x)).toBeCloseTo(-Math.expm1(-x), 14)
      expect(regularizedGammaQ(1, x) / Math.exp(-x)).toBeCloseTo(1, 12)
    }
  })

  it('matches the Poisson cdf: Q(k+1, λ) = P(Poisson(λ) ≤ k) (exact identity, summed directly)', () => {
    for (const [k, lambda] of [[0, 0.3], [3, 2.5], [10, 7], [25, 30], [60, 40]] as const) {
      expect(regularizedGammaQ(k + 1, lambda)).toBeCloseTo(poissonCdfBySum(k, lambda), 12)
    }
  })

  it('keeps relative accuracy far in the upper tail', () => {
    // e^−40 directly: Q(1, 40) = e^−40
    expect(regularizedGammaQ(1, 40) / Math.exp(-40)).toBeCloseTo(1, 12)
  })

  it('P + Q = 1 on both sides of the series/fraction switch', () => {
    for (const [a, x] of [[0.5, 0.2], [0.5, 3], [4, 4.9], [4, 5.1], [50, 45], [50, 60]] as const) {
      expect(regularizedGammaP(a, x) + regularizedGammaQ(a, x)).toBeCloseTo(1, 14)
    }
  })

  it('handles the end points and rejects bad arguments', () => {
    expect(regularizedGammaP(2, 0)).toBe(0)
    expect(regularizedGammaQ(2, 0)).toBe(1)
    expect(regularizedGammaP(2, Infinity)).toBe(1)
    expect(() => regularizedGammaP(0, 1)).toThrow(/shape/)
    expect(() => regularizedGammaQ(1, -1)).toThrow(/x >= 0/)
    expect(() => regularizedGammaP(1, Number.NaN)).toThrow(/x >= 0/)
  })
})
