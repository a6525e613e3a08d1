import { describe, it, expect } from 'vitest'
import {
  studentTCdf,
  studentTPdf,
  studentTQuantile,
  studentTSurvival,
  studentTTwoSidedP,
} from '../../src/stats/student-t-distribution.ts'
import { normalQuantile } from '../../src/stats/normal-distribution.ts'

describe('Student t distribution', () => {
  it('matches the Cauchy closed form for ν = 1: F(t) = 1/2 + atan(t)/π', () => {
    for (const t of [-30, -2, -0.5, 0, 0.1, 1, 5, 100]) {
      expect(studentTCdf(t, 1)).toBeCloseTo(0.5 + Math.atan(t) / Math.PI, 14)
    }
  })

  it('matches the closed form for ν = 2: F(t) = 1/2 + t / (2√(2 + t²))', () => {
    for (const t of [-8, -1, 0.3, 2, 40]) {
      expect(studentTCdf(t, 2)).toBeCloseTo(0.5 + t / (2 * Math.sqrt(2 + t * t)), 14)
    }
  })

  it('matches printed t-table quantiles', () => {
    // from memory [M]: t tables (R qt): qt(.975,10) = 2.228139, qt(.975,3) = 3.182446, qt(.001,5) = -5.893430
    expect(studentTQuantile(0.975, 10)).toBeCloseTo(2.228139, 6)
    expect(studentTQuantile(0.975, 3)).toBeCloseTo(3.182446, 6)
    expect(studentTQuantile(0.001, 5)).toBeCloseTo(-5.89343, 5)
    // exact: qt(.975, 1) = tan(0.475π)
    expect(studentTQuantile(0.975, 1)).toBeCloseTo(Math.tan(0.475 * Math.PI), 10)
  })

  it('inverts its cdf and tends to the normal for large ν', () => {
    for (const nu of [2.5, 4, 7, 30, 200]) {
      for (const p of [0.001, 0.05, 0.3, 0.9, 0.999]) {
        expect(studentTCdf(studentTQuantile(p, nu), nu)).toBeCloseTo(p, 12)
      }
    }
    expect(studentTQuantile(0.975, 1e7)).toBeCloseTo(normalQuantile(0.975), 5)
  })

  it('two-sided p-values are consistent with the tails and the density integrates to them', () => {
    expect(studentTTwoSidedP(2.228138851986274, 10)).toBeCloseTo(0.05, 12)
    expect(studentTSurvival(0, 9)).toBeCloseTo(0.5, 15)
    // trapezoid integral of the density from 0 to 1.5 against the cdf difference (ν = 6)
    let integral = 0
    const steps = 20000
    for (let i = 0; i < steps; i++) {
      const a = (1.5 * i) / steps
      const b = (1.5 * (i + 1)) / steps
      integral += 0.5 * (studentTPdf(a, 6) + studentTPdf(b, 6)) * (b - a)
    }
    expect(integral).toBeCloseTo(studentTCdf(1.5, 6) - 0.5, 8)
  })

  it('rejects bad degrees of freedom and probabilities', () => {
    expect(() => studentTCdf(1, 0)).toThrow(/degrees of freedom/)
    expect(() => studentTQuantile(2, 5)).toThrow(/p in/)
  })
})
