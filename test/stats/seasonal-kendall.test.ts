import { describe, it, expect } from 'vitest'
import { seasonalKendall } from '../../src/stats/seasonal-kendall.ts'
import { mannKendall } from '../../src/stats/mann-kendall.ts'

describe('seasonalKendall', () => {
  it('sums S and Var(S) over seasons: USEPA 17-7 as one season and the Holy Cross series as another', () => {
    // Season sums from two published examples (CHECKS.md §2a and §2c [S]):
    // S = 25 + 54 = 79, Var = 125 + 332.667 = 457.667, Z = (79 − 1)/√457.667 = 3.6460
    const sodium = [56, 53, 51, 55, 52, 60, 62, 59, 61, 63]
    const holyCross = [12.9, 14.8, 13.2, 15.7, 13.8, 15.6, 12.9, 11.0, 17.3, 15.9, 19.0, 18.3, 20.1, 21.7]
    const values = [...sodium, ...holyCross]
    const times = [...sodium.map((_, i) => i), ...holyCross.map((_, i) => i)]
    const seasons = [...sodium.map(() => 'a'), ...holyCross.map(() => 'b')]
    const result = seasonalKendall(values, times, seasons)
    expect(result.s).toBe(79)
    expect(result.variance).toBeCloseTo(457.667, 3)
    expect(result.z).toBeCloseTo(78 / Math.sqrt(125 + 332.6666666666667), 10)
    expect(result.z).toBeCloseTo(3.646, 3)
    expect(result.seasons).toBe(2)
    expect(result.tau).toBeCloseTo(79 / (45 + 91), 12)
  })

  it('does not mistake a pure seasonal cycle for a trend, where the plain test is misled by the phase', () => {
    // 3 years of a month-of-year pattern that ends on a high phase, no trend
    const pattern = [1, 2, 4, 7, 9, 10, 9, 7, 4, 2, 1, 0]
    const months = Array.from({ length: 30 }, (_, i) => i)
    const values = months.map((m) => pattern[m % 12]!)
    const seasonal = seasonalKendall(values, months, months.map((m) => m % 12))
    expect(seasonal.s).toBe(0)
    expect(seasonal.pValue).toBe(1)
    expect(mannKendall(values).s).not.toBe(0)
  })

  it('ignores seasons with a single observation and checks lengths', () => {
    const result = seasonalKendall([1, 2, 3], [0, 12, 5], [1, 1, 6])
    expect(result.seasons).toBe(1)
    expect(result.s).toBe(1)
    expect(() => seasonalKendall([1, 2], [0, 1], [1])).toThrow(/equal lengths/)
  })
})
