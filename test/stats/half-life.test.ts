import { describe, it, expect } from 'vitest'
import { rateSummary, slopeForHalfLife } from '../../src/stats/half-life.ts'
import { leastSquares } from '../../src/stats/least-squares.ts'

describe('rateSummary', () => {
  it('gives ln 2/0.1 = 6.931 for β = −0.1 (confirmed by hand: 0.693147/0.1)', () => {
    const summary = rateSummary(-0.1, -0.12, -0.08, 12)
    expect(summary.halfLife).toBeCloseTo(6.931471805599453, 12)
    expect(summary.halfLifeInterval![0]).toBeCloseTo(Math.LN2 / 0.12, 12)
    expect(summary.halfLifeInterval![1]).toBeCloseTo(Math.LN2 / 0.08, 12)
    expect(summary.annualGrowth).toBeCloseTo(Math.exp(-1.2) - 1, 12)
  })

  it('recovers the half-life of y = 100·2^(−t/6) fitted by log-linear least squares (CHECKS.md §7c [C])', () => {
    const t = Array.from({ length: 13 }, (_, i) => i)
    const fit = leastSquares(t.map((v) => [v]), t.map((v) => Math.log(100 * 2 ** (-v / 6))))
    const beta = fit.coefficients[1]!
    expect(rateSummary(beta, beta, beta, 12).halfLife).toBeCloseTo(6, 12)
  })

  it('reproduces the forum example t½ = 35.279 (CHECKS.md §7c [S + C]; the thread’s 35.36 used rounded k)', () => {
    const fit = leastSquares([[10], [20], [30], [40]], [0.83, 0.68, 0.56, 0.46].map(Math.log))
    const beta = fit.coefficients[1]!
    expect(rateSummary(beta, beta - 0.001, beta + 0.001, 1).halfLife).toBeCloseTo(35.279, 3)
  })

  it('is null for growing or flat series and open-ended when the interval reaches zero', () => {
    const growing = rateSummary(0.02, 0.01, 0.03)
    expect(growing.halfLife).toBeNull()
    expect(growing.halfLifeInterval).toBeNull()
    expect(growing.annualGrowth).toBeCloseTo(Math.exp(0.24) - 1, 12)
    const uncertain = rateSummary(-0.01, -0.02, 0.005)
    expect(uncertain.halfLife).toBeCloseTo(69.31471805599453, 10)
    expect(uncertain.halfLifeInterval![1]).toBe(Infinity)
  })

  it('maps the five-year shelf life to a monthly slope and back', () => {
    // "about five years" is a fact of the trade (common practice, no source)
    const beta = slopeForHalfLife(60)
    expect(rateSummary(beta, beta, beta).halfLife).toBeCloseTo(60, 12)
    expect(rateSummary(beta, beta, beta).annualGrowth).toBeCloseTo(2 ** (-1 / 5) - 1, 12)
  })

  it('rejects inconsistent input', () => {
    expect(() => rateSummary(-0.1, -0.05, -0.02)).toThrow(/lower <= slope <= upper/)
    expect(() => rateSummary(Number.NaN, 0, 1)).toThrow(/finite/)
    expect(() => slopeForHalfLife(0)).toThrow(/positive/)
  })
})
