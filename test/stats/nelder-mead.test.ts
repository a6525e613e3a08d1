import { describe, it, expect } from 'vitest'
import { nelderMead } from '../../src/stats/nelder-mead.ts'

describe('nelderMead', () => {
  it('finds the minimum of the Rosenbrock function at (1, 1) (standard test function, common practice)', () => {
    const result = nelderMead(([x, y]) => 100 * (y! - x! * x!) ** 2 + (1 - x!) ** 2, [-1.2, 1], { maxEvaluations: 2000, tolerance: 1e-14 })
    expect(result.converged).toBe(true)
    expect(result.point[0]).toBeCloseTo(1, 3)
    expect(result.point[1]).toBeCloseTo(1, 3)
    expect(result.value).toBeLessThan(1e-8)
  })

  it('minimises a shifted quadratic in three dimensions', () => {
    const result = nelderMead(([a, b, c]) => (a! - 3) ** 2 + 2 * (b! + 1) ** 2 + 0.5 * (c! - 0.25) ** 2, [0, 0, 0], { tolerance: 1e-14 })
    expect(result.point[0]).toBeCloseTo(3, 4)
    expect(result.point[1]).toBeCloseTo(-1, 4)
    expect(result.point[2]).toBeCloseTo(0.25, 4)
  })

  it('stops at the evaluation cap, treats NaN as +∞ and rejects an empty start', () => {
    const capped = nelderMead(([x, y]) => 100 * (y! - x! * x!) ** 2 + (1 - x!) ** 2, [-1.2, 1], { maxEvaluations: 20 })
    expect(capped.converged).toBe(false)
    expect(capped.evaluations).toBeLessThanOrEqual(22)
    const guarded = nelderMead(([x]) => (x! < 0 ? Number.NaN : (x! - 2) ** 2), [1])
    expect(guarded.point[0]).toBeCloseTo(2, 4)
    expect(() => nelderMead(() => 0, [])).toThrow(/at least one/)
  })
})
