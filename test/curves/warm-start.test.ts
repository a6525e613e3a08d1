import { describe, it, expect } from 'vitest'
import { changedStart, fitChanged } from '../../src/curves/fit-skill.ts'
import { buildGrid } from '../../src/curves/series.ts'
import type { SkillSeriesInput } from '../../src/curves/series.ts'
import { fitTrend, stackObservations } from '../../src/curves/trend-model.ts'
import { DEFAULT_CURVES_CONFIG } from '../../src/curves/config.ts'
import { seededRandom } from '../stats/seeded-random.ts'
import { monthRange } from './simulate.ts'

/**
 * The fit with a breakpoint is started from the no-change fit (changedStart) instead of R's cold
 * start μ = y + 0.1. Both run IRLS to the same deviance tolerance, so the coefficients must agree to
 * the optimiser's accuracy: within 1e-6 relative (absolute for coefficients near zero), on series
 * drawn like bench/fit.ts (shares 0.02% to 20%, slopes ±6% a month, lognormal noise), half of them
 * with a planted change of slope, some with an internal series and with seasonal terms.
 */
describe('warm start of the fit with a breakpoint', () => {
  it('gives the cold start coefficients within 1e-6 relative on bench-like series', () => {
    const random = seededRandom(515)
    const months = monthRange('2021-01', 60)
    const postings = months.map(() => 40_000 + Math.floor(random.uniform() * 8000))
    const requests = months.map(() => 3000 + Math.floor(random.uniform() * 600))
    let compared = 0
    let fewerIterations = 0
    let coldIterations = 0
    let warmIterations = 0
    for (let k = 0; k < 120; k++) {
      const base = Math.exp(-8.5 + 7 * random.uniform())
      const slope = (random.uniform() - 0.5) * 0.12
      const change = k % 2 === 0 ? (random.uniform() - 0.5) * 0.12 : 0
      const breakAt = 30 + Math.floor(random.uniform() * 20)
      const share = (t: number) => Math.min(0.5, base * Math.exp(slope * (t - 30) + change * Math.max(0, t - breakAt)))
      const input: SkillSeriesInput = {
        id: `skill-${k}`,
        months,
        external: { n: postings.map((N, t) => Math.min(N, random.poisson(N * share(t) * Math.exp(0.05 * random.normal())))), N: postings },
      }
      if (k % 5 === 0) input.internal = { n: requests.map((N, t) => Math.min(N, random.poisson(N * 0.3 * share(t - 2)))), N: requests }
      const grid = buildGrid(input, { weights: DEFAULT_CURVES_CONFIG.weights, windowMonths: DEFAULT_CURVES_CONFIG.windowMonths, minMonths: DEFAULT_CURVES_CONFIG.minMonths })
      const observations = stackObservations(grid)
      const harmonics = k % 3
      const linear = fitTrend(observations, { harmonics, breakpoint: null })
      for (const breakpoint of [breakAt, 40, 52]) {
        const spec = { harmonics, breakpoint }
        const cold = fitTrend(observations, spec)
        const warm = fitTrend(observations, spec, changedStart(linear))
        expect(warm.glm.converged).toBe(true)
        coldIterations += cold.glm.iterations
        warmIterations += warm.glm.iterations
        if (warm.glm.iterations < cold.glm.iterations) fewerIterations++
        for (let j = 0; j < cold.glm.coefficients.length; j++) {
          const a = cold.glm.coefficients[j]!
          const b = warm.glm.coefficients[j]!
          expect(Math.abs(a - b)).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(a)))
        }
        expect(Math.abs(warm.glm.deviance - cold.glm.deviance)).toBeLessThanOrEqual(1e-6 * Math.max(1, cold.glm.deviance))
        compared++
      }
    }
    expect(compared).toBe(360)
    // the point of the warm start: fewer IRLS iterations overall
    expect(warmIterations).toBeLessThan(coldIterations)
    expect(fewerIterations).toBeGreaterThan(compared / 4)
    console.log(`IRLS iterations: cold ${coldIterations}, warm ${warmIterations}; fewer in ${fewerIterations} of ${compared} fits`)
  })

  it('inserts a zero slope change after the slope column', () => {
    const months = monthRange('2022-01', 24)
    const grid = buildGrid(
      { id: 'x', months, external: { n: months.map((_, t) => 50 + 3 * t), N: months.map(() => 1000) } },
      { weights: DEFAULT_CURVES_CONFIG.weights, windowMonths: DEFAULT_CURVES_CONFIG.windowMonths, minMonths: 12 },
    )
    const linear = fitTrend(stackObservations(grid), { harmonics: 1, breakpoint: null })
    const c = linear.glm.coefficients
    expect(Array.from(changedStart(linear))).toEqual([c[0], c[1], 0, c[2], c[3]])
  })

  it('falls back to the cold start when the warm start fails (sparse skill)', () => {
    // all 59 mentions in the first month: from the no-change fit the means of the empty months are
    // near zero and IRLS cannot find a finite step; the cold start μ = y + 0.1 still fits
    const months = monthRange('2021-01', 36)
    const n = months.map((_, t) => (t === 0 ? 59 : 0))
    const grid = buildGrid(
      { id: 'sparse', months, external: { n, N: months.map(() => 1000) } },
      { weights: DEFAULT_CURVES_CONFIG.weights, windowMonths: DEFAULT_CURVES_CONFIG.windowMonths, minMonths: 12 },
    )
    const observations = stackObservations(grid)
    const linear = fitTrend(observations, { harmonics: 0, breakpoint: null })
    const spec = { harmonics: 0, breakpoint: 8 }
    expect(() => fitTrend(observations, spec, changedStart(linear))).toThrow()
    const cold = fitTrend(observations, spec)
    const fallback = fitChanged(observations, linear, 8, 0)
    expect(Array.from(fallback.glm.coefficients)).toEqual(Array.from(cold.glm.coefficients))
  })
})
