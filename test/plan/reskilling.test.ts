import { describe, it, expect } from 'vitest'
import { parseBands, readSkillCurve, type SkillCurve } from '../../src/plan/curve-model.ts'
import { createRng, hashSeed, quantileSorted } from '../../src/plan/random.ts'
import { demandPath, forecastTarget, type ForecastSettings, type ForecastTarget } from '../../src/plan/reskilling-forecast.ts'
import { testConfig } from './fixtures.ts'

describe('seeded random numbers', () => {
  it('the same seed gives the same sequence; another seed another', () => {
    const a = createRng(42)
    const b = createRng(42)
    const c = createRng(43)
    const xs = Array.from({ length: 5 }, () => a.uniform())
    expect(Array.from({ length: 5 }, () => b.uniform())).toEqual(xs)
    expect(Array.from({ length: 5 }, () => c.uniform())).not.toEqual(xs)
    expect(hashSeed(7, 'kubernetes')).toBe(hashSeed(7, 'kubernetes'))
    expect(hashSeed(7, 'kubernetes')).not.toBe(hashSeed(7, 'terraform'))
  })

  it('uniform and normal deviates have the textbook moments', () => {
    const rng = createRng(1)
    const n = 40_000
    let su = 0
    let sn = 0
    let sn2 = 0
    for (let i = 0; i < n; i++) {
      su += rng.uniform()
      const z = rng.normal()
      sn += z
      sn2 += z * z
    }
    // uniform mean 1/2 (sd of the mean 0.289/√n = 0.0014); normal mean 0, variance 1 (sd of the variance √(2/n) = 0.007)
    expect(Math.abs(su / n - 0.5)).toBeLessThan(0.006)
    expect(Math.abs(sn / n)).toBeLessThan(0.02)
    expect(Math.abs(sn2 / n - 1)).toBeLessThan(0.03)
  })

  it('binomial deviates have mean np and variance np(1-p), by inversion and by the normal route', () => {
    const rng = createRng(2)
    for (const [trials, p] of [[20, 0.3], [10, 0.9], [5000, 0.2], [400, 0.5]] as const) {
      const n = 20_000
      let s = 0
      let s2 = 0
      let lo = Infinity
      let hi = -Infinity
      for (let i = 0; i < n; i++) {
        const k = rng.binomial(trials, p)
        lo = Math.min(lo, k)
        hi = Math.max(hi, k)
        s += k
        s2 += k * k
      }
      expect(lo).toBeGreaterThanOrEqual(0)
      expect(hi).toBeLessThanOrEqual(trials)
      const mean = s / n
      const variance = s2 / n - mean * mean
      const trueVar = trials * p * (1 - p)
      expect(Math.abs(mean - trials * p)).toBeLessThan(5 * Math.sqrt(trueVar / n))
      expect(Math.abs(variance / trueVar - 1)).toBeLessThan(0.05)
    }
    expect(rng.binomial(0, 0.5)).toBe(0)
    expect(rng.binomial(10, 0)).toBe(0)
    expect(rng.binomial(10, 1)).toBe(10)
  })

  it('quantiles follow R’s default (type 7) definition', () => {
    // type 7: h = (n-1)p, linear between order statistics; worked by hand: (1..10) at 0.1 -> 1 + 0.9 = 1.9,
    // at 0.95 -> 9 + 0.55 = 9.55; (1, 3, 7) at 0.5 -> 3
    const ten = Array.from({ length: 10 }, (_, i) => i + 1)
    expect(quantileSorted(ten, 0.1)).toBeCloseTo(1.9, 12)
    expect(quantileSorted(ten, 0.95)).toBeCloseTo(9.55, 12)
    expect(quantileSorted([1, 3, 7], 0.5)).toBe(3)
    expect(quantileSorted([], 0.5)).toBeNaN()
  })
})

function curve(over: Partial<SkillCurve> = {}): SkillCurve {
  const c: SkillCurve = {
    id: 'ts',
    state: 'rising',
    evidenced: true,
    annualGrowth: 0,
    pAdjusted: 0.01,
    latestShare: 0.05,
    forecastShare12: 0.05,
    halfLifeMonths: null,
    halfLifeLow: null,
    halfLifeHigh: null,
    rate: 0,
    rateLow: null,
    rateHigh: null,
    bands: [],
    bandLevel: 0.95,
    lastMonth: null,
    baseShare: null,
    ...over,
  }
  return { ...c, baseShare: over.baseShare ?? c.latestShare }
}

describe('demand paths', () => {
  it('without bands: exp(rate·t), shifted by z standard deviations of the rate interval', () => {
    const rate = Math.log(1.5) / 12
    expect(demandPath(curve({ rate }), [12, 24], 0, 0.001)).toEqual([expect.closeTo(1.5, 12), expect.closeTo(2.25, 12)])
    // interval of the rate ±0.01/month around it: sd = 0.02/(2·1.959964)
    const sd = 0.02 / (2 * 1.959963984540054)
    const up = demandPath(curve({ rate, rateLow: rate - 0.01, rateHigh: rate + 0.01 }), [12], 1, 0.001)
    expect(up[0]).toBeCloseTo(Math.exp((rate + sd) * 12), 9)
  })

  it('with bands: log-linear between bands, the band edge at z = its normal quantile', () => {
    const c = curve({ latestShare: 0.05, bands: [{ monthsAhead: 12, mid: 0.1, low: 0.05, high: 0.2 }], bandLevel: 0.95 })
    const [m6, m12] = demandPath(c, [6, 12], 0, 0.001)
    expect(m12).toBeCloseTo(2, 12) // 0.1 / 0.05
    expect(m6).toBeCloseTo(Math.SQRT2, 12) // halfway in log space
    // at z = 1.959964 the path reaches the band's upper edge: 0.2/0.05 = 4
    expect(demandPath(c, [12], 1.959963984540054, 0.001)[0]).toBeCloseTo(4, 9)
    // beyond the last band the curve's rate continues (rate 0 here)
    expect(demandPath(c, [24], 0, 0.001)[0]).toBeCloseTo(2, 12)
  })

  it('bands are read from several field spellings, malformed entries skipped', () => {
    expect(parseBands({ forecast: [{ share: 0.1, lower: 0.05, upper: 0.2 }, { mid: 0.11, lo: 0.05, hi: 0.3, h: 3 }, { share: 'x' }] }).bands).toEqual([
      { monthsAhead: 1, mid: 0.1, low: 0.05, high: 0.2 },
      { monthsAhead: 3, mid: 0.11, low: 0.05, high: 0.3 },
    ])
    expect(parseBands({ bands: [], level: 0.8 }).level).toBe(0.8)
    expect(parseBands({}).bands).toEqual([])
    const row = readSkillCurve({ concept_id: 'x', state: 'rising', annual_growth: 0.2, growth_low: 0.1, growth_high: 0.3, half_life_months: null, half_life_low: null, half_life_high: null, p_value: null, p_adjusted: 0.01, latest_share: 0.1, forecast_share12: 0.12, details_json: 'not json', fitted_at: '' })
    expect(row.bands).toEqual([])
    expect(row.rate).toBeCloseTo(Math.log(1.2) / 12, 12)
    expect(row.rateLow).toBeCloseTo(Math.log(1.1) / 12, 12)
    expect(row.rateHigh).toBeCloseTo(Math.log(1.3) / 12, 12)
  })
})

function settings(over: Partial<ForecastSettings> = {}, reskilling: Record<string, unknown> = {}): ForecastSettings {
  const plan = testConfig({ reskilling: { simulations: 500, ...reskilling } }).plan
  return { horizonQuarters: 8, attritionRate: 0, hiringRate: 0, seed: 7, reskilling: plan.reskilling, shareFloor: 0.001, ...over }
}

function target(over: Partial<ForecastTarget> = {}): ForecastTarget {
  return { id: 'ts', label: 'TypeScript', curve: curve(), headcount: 10, needNow: 10, expectedMeeting: 3, assessed: 6, unknown: 4, candidatesAvailable: 2, ...over }
}

describe('reskilling forecast', () => {
  it('no attrition, no hiring, flat demand: need minus supply, with no spread', () => {
    // supply = 3 expected among the assessed + 4 unassessed at the assessed rate 3/6 = 5; need 10 -> 5 to reskill
    const rows = forecastTarget(target(), '2025-12', settings())
    expect(rows).toHaveLength(8)
    for (const r of rows) expect([r.reskill, r.low, r.high]).toEqual([5, 5, 5])
    expect(rows.map((r) => r.period)).toEqual(['2026-Q1', '2026-Q2', '2026-Q3', '2026-Q4', '2027-Q1', '2027-Q2', '2027-Q3', '2027-Q4'])
    expect(rows[0]).toMatchObject({ quarter: 1, endMonth: '2026-03', headcountNow: 10, needNow: 10, candidatesAvailable: 2 })
  })

  it('need is capped by the exposed headcount', () => {
    const rows = forecastTarget(target({ curve: curve({ rate: Math.log(2) / 12 }), needNow: 8 }), '2025-12', settings())
    // need 8·2^(t/12) passes the headcount 10 within a year; supply 5 -> at most 5 to reskill
    expect(rows[7]!.need).toBe(10)
    expect(rows[7]!.reskill).toBe(5)
    expect(rows[0]!.need).toBeCloseTo(8 * 2 ** 0.25, 9)
  })

  it('attrition empties the supply at the expected rate', () => {
    // 1,000 people, 500 meeting, 20% a year leave, nobody hired: after a year supply ≈ 400, headcount ≈ 800 = need
    const rows = forecastTarget(target({ headcount: 1000, needNow: 1000, expectedMeeting: 500, assessed: 1000, unknown: 0 }), '2025-12', settings({ attritionRate: 0.2 }))
    const year = rows[3]!
    expect(year.supply).toBeGreaterThan(380)
    expect(year.supply).toBeLessThan(420)
    expect(year.reskill).toBeGreaterThan(380)
    expect(year.reskill).toBeLessThan(420)
    expect(year.low).toBeLessThanOrEqual(year.reskill)
    expect(year.high).toBeGreaterThanOrEqual(year.reskill)
    expect(year.high).toBeGreaterThan(year.low)
  })

  it('hires who meet the requirement add supply', () => {
    const base = forecastTarget(target({ headcount: 1000, needNow: 1000, expectedMeeting: 500, assessed: 1000, unknown: 0 }), '2025-12', settings({ attritionRate: 0.1 }))
    const hiring = forecastTarget(target({ headcount: 1000, needNow: 1000, expectedMeeting: 500, assessed: 1000, unknown: 0 }), '2025-12', settings({ attritionRate: 0.1, hiringRate: 0.1 }, { hireMeetRate: 1 }))
    expect(hiring[7]!.supply).toBeGreaterThan(base[7]!.supply + 100)
  })

  it('the interval widens with the horizon when demand is uncertain', () => {
    const rate = Math.log(1.3) / 12
    const rows = forecastTarget(target({ headcount: 500, needNow: 200, expectedMeeting: 20, assessed: 100, unknown: 0, curve: curve({ rate, rateLow: rate - 0.02, rateHigh: rate + 0.02 }) }), '2025-12', settings())
    const width = rows.map((r) => r.high - r.low)
    expect(width[7]!).toBeGreaterThan(width[0]!)
    for (const r of rows) expect(r.low).toBeLessThanOrEqual(r.reskill)
  })

  it('is reproducible for a seed', () => {
    const t = target({ headcount: 300, needNow: 250, expectedMeeting: 100, assessed: 200, unknown: 100, curve: curve({ rate: 0.01, rateLow: 0, rateHigh: 0.02 }) })
    const s = settings({ attritionRate: 0.15, hiringRate: 0.1 })
    expect(forecastTarget(t, '2025-12', s)).toEqual(forecastTarget(t, '2025-12', s))
  })
})
