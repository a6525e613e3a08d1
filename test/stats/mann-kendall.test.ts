import { describe, it, expect } from 'vitest'
import { mannKendall } from '../../src/stats/mann-kendall.ts'

// USEPA (2009) Unified Guidance Example 17-7 (sodium) and 17-6 (sulfate): data and expected values
// from CHECKS.md §2a/§2b [S], reproduced by EnvStats (Chapter17Examples.R, kendallTrendTest.Rd)
const SODIUM_YEAR = [89.6, 90.1, 90.8, 91.1, 92.1, 93.1, 94.1, 95.6, 96.1, 96.3]
const SODIUM = [56, 53, 51, 55, 52, 60, 62, 59, 61, 63]
const SULFATE_DATE = [
  89.6, 89.8, 90.1, 90.3, 90.6, 90.8, 91.1, 91.3, 91.6, 91.8, 92.1, 92.6, 93.1, 93.6, 94.1, 94.6, 95.1, 95.6, 95.8, 96.1,
  96.3, 96.6, 96.8,
]
const SULFATE = [480, 450, 490, 520, 485, 510, 510, 530, 510, 560, 560, 540, 590, 550, 600, 700, 570, 610, 650, 620, 830, 720, 590]

describe('mannKendall', () => {
  it('USEPA 2009 Example 17-7 (sodium, no ties): S = 25, Var = 125, z = 2.146625, p = 0.03182313', () => {
    const result = mannKendall(SODIUM, SODIUM_YEAR)
    expect(result.s).toBe(25)
    expect(result.variance).toBeCloseTo(125, 10)
    expect(result.tau).toBeCloseTo(0.5555556, 7)
    expect(result.z).toBeCloseTo(2.146625, 6)
    expect(result.pValue).toBeCloseTo(0.03182313, 7)
    // without explicit times the order alone gives the same answer
    expect(mannKendall(SODIUM).z).toBeCloseTo(2.146625, 6)
  })

  it('USEPA 2009 Example 17-6 (sulfate, ties in y): S = 194, Var = 1428, z = 5.107322, p = 3.267574e-07', () => {
    const result = mannKendall(SULFATE, SULFATE_DATE)
    expect(result.s).toBe(194)
    expect(result.variance).toBeCloseTo(1428, 8)
    expect(result.tau).toBeCloseTo(0.7667984, 7)
    expect(result.z).toBeCloseTo(5.107322, 6)
    expect(result.pValue / 3.267574e-7).toBeCloseTo(1, 5)
  })

  it('Holy Cross hand-worked example: S = 54, V = 332.667, Z = 2.9058, one-sided p ≈ .0018', () => {
    // D. Little, College of the Holy Cross, MannKendallByHand.txt, CHECKS.md §2c [S]
    const values = [12.9, 14.8, 13.2, 15.7, 13.8, 15.6, 12.9, 11.0, 17.3, 15.9, 19.0, 18.3, 20.1, 21.7]
    const result = mannKendall(values)
    expect(result.s).toBe(54)
    expect(result.variance).toBeCloseTo(332.667, 3)
    expect(result.z).toBeCloseTo(2.9058, 4)
    expect(result.pValue / 2).toBeCloseTo(0.0018, 4)
    expect(result.pValue).toBeCloseTo(0.00366, 5)
  })

  it('Gilbert (1987) p. 212 series as a sequence: S = 111, Var = 1226.333, Z = 3.1411 (book: "3.1")', () => {
    // CHECKS.md §2d: Gilbert's example as copied in a public package's tests [S]; recomputed [C].
    // The book may count time ties too, so only the sequence-only values are asserted tightly.
    const values = [20, 20, 20, 20, 15, 20, 20, 30, 27, 26, 23, 35, 25, 28, 70, 26, 24, 34, 32, 23, 50, 30]
    const result = mannKendall(values)
    expect(result.s).toBe(111)
    expect(result.variance).toBeCloseTo(1226.333, 3)
    expect(result.z).toBeCloseTo(3.1411, 4)
    expect(result.pValue).toBeCloseTo(0.001683, 6)
    expect(Math.abs(result.z - 3.1)).toBeLessThan(0.05)
  })

  it('corrects for ties in time as well as in values', () => {
    // With ties only in time, the value-tie terms vanish and Var = [n(n−1)(2n+5) − Σv(v−1)(2v+5)]/18.
    const times = [1, 1, 2, 3, 3, 3, 4]
    const values = [2, 1, 4, 3, 6, 5, 7]
    const result = mannKendall(values, times)
    const n = 7
    expect(result.variance).toBeCloseTo((n * (n - 1) * (2 * n + 5) - 2 * 1 * 9 - 3 * 2 * 11) / 18, 12)
    // pairs with tied times contribute nothing to S
    let s = 0
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) s += Math.sign(times[j]! - times[i]!) * Math.sign(values[j]! - values[i]!)
    expect(result.s).toBe(s)
  })

  it('handles degenerate series and rejects bad input', () => {
    expect(mannKendall([5]).pValue).toBe(1)
    const constant = mannKendall([3, 3, 3, 3])
    expect(constant.s).toBe(0)
    expect(constant.variance).toBe(0)
    expect(constant.pValue).toBe(1)
    expect(() => mannKendall([1, Number.NaN, 3])).toThrow(/finite values, position 1/)
    expect(() => mannKendall([1, 2, 3], [1, 2])).toThrow(/one time per value/)
  })
})
