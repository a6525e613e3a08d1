import { describe, it, expect } from 'vitest'
import { fSurvival } from '../../src/stats/f-distribution.ts'
import { studentTTwoSidedP } from '../../src/stats/student-t-distribution.ts'
import { chiSquareSurvival } from '../../src/stats/chi-square-distribution.ts'

describe('F distribution', () => {
  it('equals the two-sided t test for 1 numerator df: F(1, ν) = t²_ν', () => {
    for (const [t, nu] of [[0.5, 3], [2.228138851986274, 10], [4, 25], [10, 60]] as const) {
      expect(fSurvival(t * t, 1, nu)).toBeCloseTo(studentTTwoSidedP(t, nu), 13)
    }
  })

  it('tends to χ²_d1 / d1 as the denominator df grows', () => {
    expect(fSurvival(3.841458820694124, 1, 1e9)).toBeCloseTo(chiSquareSurvival(3.841458820694124, 1), 6)
    expect(fSurvival(2, 4, 1e9)).toBeCloseTo(chiSquareSurvival(8, 4), 6)
  })

  it('matches the printed 5% point of F(2, 10)', () => {
    // from memory [M]: F tables, qf(.95, 2, 10) = 4.102821
    expect(fSurvival(4.102821, 2, 10)).toBeCloseTo(0.05, 6)
    // exact: for d1 = 2, P(F > f) = (1 + 2f/d2)^(−d2/2)
    expect(fSurvival(3, 2, 7)).toBeCloseTo((1 + (2 * 3) / 7) ** -3.5, 13)
  })

  it('rejects bad degrees of freedom', () => {
    expect(fSurvival(0, 1, 1)).toBe(1)
    expect(() => fSurvival(1, 0, 5)).toThrow(/degrees of freedom/)
  })
})
