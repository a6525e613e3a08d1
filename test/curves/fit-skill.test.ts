import { describe, it, expect } from 'vitest'
import { analyseSkill, fitSkill } from '../../src/curves/fit-skill.ts'
import { DEFAULT_CURVES_CONFIG as CONFIG, curvesConfigSchema } from '../../src/curves/config.ts'
import { SeriesInputError } from '../../src/curves/series.ts'
import { seededRandom } from '../stats/seeded-random.ts'
import { drawCounts, monthRange } from './simulate.ts'

const MONTHS = monthRange('2023-01', 36)

function series(seed: number, share: (t: number) => number, options: { months?: string[]; perMonth?: number; extra?: number } = {}) {
  const random = seededRandom(seed)
  const months = options.months ?? MONTHS
  const N = months.map(() => (options.perMonth ?? 2000) - 200 + Math.floor(random.uniform() * 400))
  return { months, N, n: drawCounts(random, N, months.map((_, t) => share(t)), options.extra ?? 0) }
}

describe('fitSkill', () => {
  it('sees a skill that was steady and started declining ten months ago as declining now', () => {
    // the demo's Jenkins shape (src/demo/planted.ts): 6% of postings, steady to month 26, then half-life 1.5 years
    const { months, N, n } = series(3, (t) => 0.06 * (t < 26 ? 1 : 2 ** (-(t - 26) / 18)))
    const curve = fitSkill({ id: 'jenkins', months, external: { n, N } }, CONFIG)
    expect(curve.state).toBe('declining')
    expect(curve.changeMonth).not.toBeNull()
    // the change is found within three months of the planted one (2025-03 is month 26)
    expect(Math.abs(months.indexOf(curve.changeMonth!) - 26)).toBeLessThanOrEqual(3)
    expect(curve.halfLifeMonths).not.toBeNull()
    expect(curve.halfLifeMonths!).toBeLessThan(40)
    // a whole-window log-linear slope would call this a slow decline; the current slope is steeper
    const full = (curve.details['fullWindowSlope'] as { estimate: number }).estimate
    expect(curve.beta!).toBeLessThan(full)
  })

  it('reports growth, half-life and its interval from the slope (ln 2 / −β, exp(12β) − 1)', () => {
    const { months, N, n } = series(5, (t) => 0.05 * 2 ** (-t / 36))
    const curve = fitSkill({ id: 'perl', months, external: { n, N } }, CONFIG)
    expect(curve.state).toBe('declining')
    expect(curve.halfLifeMonths).toBeCloseTo(Math.LN2 / -curve.beta!, 10)
    expect(curve.annualGrowth).toBeCloseTo(Math.expm1(12 * curve.beta!), 10)
    expect(curve.halfLifeInterval![0]).toBeCloseTo(Math.LN2 / -curve.betaInterval![0], 10)
    expect(curve.halfLifeInterval![0]).toBeLessThan(36)
    expect(curve.halfLifeInterval![1]!).toBeGreaterThan(36)
  })

  it('keeps halfLifeMonths null unless the skill declines', () => {
    const { months, N, n } = series(6, (t) => 0.03 * 1.4 ** (t / 12))
    const curve = fitSkill({ id: 'rust', months, external: { n, N } }, CONFIG)
    expect(curve.state).toBe('rising')
    expect(curve.halfLifeMonths).toBeNull()
    expect(curve.halfLifeInterval).toBeNull()
  })

  it('treats months with no documents as missing: gaps do not bias the trend', () => {
    const { months, N, n } = series(7, () => 0.04)
    const gappy = N.map((total, t) => (t % 5 === 2 ? 0 : total))
    const withGaps = fitSkill({ id: 'sql', months, external: { n: n.map((v, t) => (gappy[t] === 0 ? 0 : v)), N: gappy } }, CONFIG)
    expect(withGaps.state).toBe('steady')
    expect(Math.abs(withGaps.annualGrowth!)).toBeLessThan(0.05)
    expect(withGaps.details['observedMonths']).toBe(36 - 7)
  })

  it('forecasts 12 months with nested 80% and 95% bands and names the method', () => {
    const { months, N, n } = series(8, (t) => 0.04 * 1.3 ** (t / 12))
    const curve = fitSkill({ id: 'k8s', months, external: { n, N } }, CONFIG)
    expect(curve.forecast).toHaveLength(12)
    expect(['regression', 'damped-holt']).toContain(curve.forecastMethod)
    expect(curve.forecastShare12).toBe(curve.forecast.share[11])
    expect(curve.forecast.points()[0]!.month).toBe('2026-01')
    for (const point of curve.forecast.points()) {
      expect(point.lo95).toBeLessThanOrEqual(point.lo80)
      expect(point.lo80).toBeLessThanOrEqual(point.share)
      expect(point.share).toBeLessThanOrEqual(point.hi80)
      expect(point.hi80).toBeLessThanOrEqual(point.hi95)
      expect(point.lo95).toBeGreaterThanOrEqual(0)
    }
    const mse = curve.details['oneStepMse'] as Record<string, number | null>
    expect(mse['regression']).not.toBeNull()
    const chosen = curve.forecastMethod === 'regression' ? mse['regression']! : mse['damped-holt']!
    const other = curve.forecastMethod === 'regression' ? mse['damped-holt'] : mse['regression']
    if (other !== null && other !== undefined) expect(chosen).toBeLessThanOrEqual(other)
  })

  it('chooses month-of-year terms for a seasonal skill and then uses the seasonal Kendall test', () => {
    // a skill asked for every January (tax season), flat otherwise
    const months = monthRange('2021-01', 48)
    const { N, n } = series(9, (t) => 0.03 * (1 + 0.5 * Math.cos((2 * Math.PI * t) / 12)), { months })
    const analysis = analyseSkill({ id: 'tax', months, external: { n, N } }, CONFIG)
    expect(analysis.harmonics).toBeGreaterThan(0)
    expect(analysis.mannKendall!.seasonal).toBe(true)
    expect(analysis.qaic.length).toBeGreaterThan(1)
    const off = analyseSkill({ id: 'tax', months, external: { n, N } }, curvesConfigSchema.parse({ seasonal: 'off' }))
    expect(off.harmonics).toBe(0)
  })

  it('finds emergence from near zero and calls the skill emerging', () => {
    const { months, N, n } = series(10, (t) => (t < 20 ? 0.0003 : 0.006 * 3 ** ((t - 20) / 12)))
    const curve = fitSkill({ id: 'rag', months, external: { n, N } }, CONFIG)
    expect(curve.state).toBe('emerging')
    expect(Math.abs(months.indexOf(curve.emergedMonth!) - 20)).toBeLessThanOrEqual(2)
    expect((curve.details['regime'] as { kind: string }).kind).toBe('emergence')
  })

  it('combines external and internal series with the configured weights', () => {
    const random = seededRandom(11)
    const N = MONTHS.map(() => 2000)
    const R = MONTHS.map(() => 400)
    const input = {
      id: 'python',
      months: MONTHS,
      external: { n: drawCounts(random, N, MONTHS.map(() => 0.18)), N },
      internal: { n: drawCounts(random, R, MONTHS.map(() => 0.03)), N: R },
    }
    const both = fitSkill(input, CONFIG)
    expect(both.state).toBe('steady')
    const sources = both.details['sources'] as { name: string; weight: number }[]
    expect(sources.map((s) => [s.name, s.weight])).toEqual([['external', 0.7], ['internal', 0.3]])
    const onlyExternal = fitSkill(input, curvesConfigSchema.parse({ weights: { external: 1, internal: 0 } }))
    expect((onlyExternal.details['sources'] as unknown[]).length).toBe(1)
    expect(onlyExternal.latestShare).toBeCloseTo(input.external.n[35]! / 2000, 12)
  })

  it('says insufficient-evidence for too few months or mentions, with the reason', () => {
    const short = fitSkill({ id: 'new', months: MONTHS.slice(0, 8), external: { n: [5, 6, 5, 7, 6, 5, 6, 7], N: new Array(8).fill(1000) } }, CONFIG)
    expect(short.state).toBe('insufficient-evidence')
    expect(short.stateReason).toMatch(/8 observed months, fewer than 12/)
    const rare = fitSkill({ id: 'rare', months: MONTHS, external: { n: MONTHS.map((_, t) => (t % 6 === 0 ? 1 : 0)), N: MONTHS.map(() => 2000) } }, CONFIG)
    expect(rare.state).toBe('insufficient-evidence')
    expect(rare.stateReason).toMatch(/6 mentions in the window, fewer than 20/)
    expect(rare.latestShare).toBe(0)
    expect(rare.forecast.points()).toEqual([])
  })

  it('rejects malformed input naming the skill and field', () => {
    expect(() => fitSkill({ id: 'bad', months: ['2024-01', 'Jan 2024'], external: { n: [1, 2], N: [5, 5] } }, CONFIG)).toThrow(SeriesInputError)
    expect(() => fitSkill({ id: 'bad', months: ['2024-01'], external: { n: [9], N: [5] } }, CONFIG)).toThrow(/skill "bad": external.n \(9\) exceeds external.N \(5\) for 2024-01/)
  })
})
