import { describe, it, expect } from 'vitest'
import { regularizedBeta } from '../../src/stats/incomplete-beta.ts'

/** Upper binomial tail P(X ≥ k), X ~ Binomial(n, p), summed directly (independent check). */
function binomialUpperTail(k: number, n: number, p: number): number {
  let sum = 0
  let coefficient = 1
  for (let i = 0; i <= n; i++) {
    if (i > 0) coefficient = (coefficient * (n - i + 1)) / i
    if (i >= k) sum += coefficient * p ** i * (1 - p) ** (n - i)
  }
  return sum
}

describe('regularizedBeta', () => {
  it('matches binomial tails: I_p(k, n−k+1) = P(Binomial(n, p) ≥ k) (exact identity)', () => {
    for (const [k, n, p] of [[2, 4, 0.5], [1, 10, 0.05], [7, 20, 0.3], [15, 30, 0.6], [29, 30, 0.9]] as const) {
      expect(regularizedBeta(p, k, n - k + 1)).toBeCloseTo(binomialUpperTail(k, n, p), 13)
    }
  })

  it('matches the closed forms I_x(a, 1) = x^a and I_x(1, b) = 1 − (1 − x)^b', () => {
    for (const x of [0.01, 0.2, 0.5, 0.8, 0.99]) {
      expect(regularizedBeta(x, 3.5, 1)).toBeCloseTo(x ** 3.5, 14)
      expect(regularizedBeta(x, 1, 2.5)).toBeCloseTo(1 - (1 - x) ** 2.5, 14)
    }
  })

  it('is symmetric: I_x(a, b) = 1 − I_{1−x}(b, a)', () => {
    for (const [x, a, b] of [[0.3, 2, 7], [0.7, 0.5, 0.5], [0.05, 30, 2], [0.95, 100, 90]] as const) {
      expect(regularizedBeta(x, a, b) + regularizedBeta(1 - x, b, a)).toBeCloseTo(1, 13)
    }
  })

  it('gives arcsine law values for a = b = 1/2: I_x = (2/π) asin √x', () => {
    for (const x of [0.1, 0.25, 0.5, 0.9]) {
      expect(regularizedBeta(x, 0.5, 0.5)).toBeCloseTo((2 / Math.PI) * Math.asin(Math.sqrt(x)), 13)
    }
  })

  it('rejects arguments outside the domain', () => {
    expect(() => regularizedBeta(1.5, 1, 1)).toThrow(/x in \[0, 1\]/)
    expect(() => regularizedBeta(0.5, 0, 1)).toThrow(/positive/)
    expect(() => regularizedBeta(Number.NaN, 1, 1)).toThrow(/x in/)
  })
})
