import { describe, expect, it } from 'vitest'
import * as f from '../../src/server/format.ts'
import { readCurveDetails, readForecast, readMonthSeries, scoreParts } from '../../src/server/payloads.ts'
import { describeCurve, type CurveSummary } from '../../src/server/pages/skill-words.ts'
import { RESKILLING_TABLES } from '../../src/server/pages/reskilling.ts'
import { redactLocation } from '../../src/server/pages/sources.ts'
import { readExamples, readTrend } from '../../src/server/pages/taxonomy.ts'
import { sparkPoints, sparkline } from '../../src/server/sparkline.ts'

describe('sparkPoints', () => {
  it('scales into the box with padding from a zero baseline, top = maximum', () => {
    expect(sparkPoints([0, 1], 10, 10, 0)).toBe('0,10 10,0')
    expect(sparkPoints([0, 2, 4], 104, 24, 2)).toBe('2,22 52,12 102,2')
    expect(sparkPoints([2, 4], 10, 10, 0)).toBe('0,5 10,0') // half the share is half the height
  })
  it('draws a constant series at full height, zeros in the middle, skips missing values, nothing for no data', () => {
    expect(sparkPoints([5, 5, 5], 10, 20, 0)).toBe('0,0 5,0 10,0')
    expect(sparkPoints([0, 0], 10, 20, 0)).toBe('0,10 10,10')
    expect(sparkPoints([1, null, 3], 10, 9, 0)).toBe('0,6 10,0')
    expect(sparkPoints([null, NaN as number])).toBe('')
  })
  it('names first and last value in its accessible label', async () => {
    expect(String(await sparkline([0.01, 0.02], 'SQL'))).toContain('aria-label="SQL: share of postings from 1.00% to 2.00% over 2 months"')
    expect(String(await sparkline([], 'SQL'))).toContain('no data')
  })
})

describe('the reskilling forecast table', () => {
  it('shows expected counts of people to the whole person, the same way in every row', () => {
    const { columns } = RESKILLING_TABLES.forecast({} as never)
    const cell = (key: string, row: Record<string, unknown>) => String(columns.find((c) => c.key === key)!.cell!(row as never))
    expect([781.96, 794, 113.3].map((need) => cell('need', { need }))).toEqual(['782', '794', '113'])
    expect(cell('supply', { supply: 75.5 })).toBe('76')
    expect(cell('need', { need: null })).toBe('–')
  })
})

describe('format', () => {
  it('words numbers without ever printing NaN', () => {
    expect(f.share(0.01234)).toBe('1.23%')
    expect(f.growth(0.35)).toBe('+35.0% a year')
    expect(f.growth(-0.3)).toBe('−30.0% a year')
    expect(f.growth(2.5)).toBe('+250% a year')
    expect(f.months(7.25)).toBe('7.3 months')
    expect(f.months(23.4)).toBe('23 months')
    expect(f.pValue(0.0004)).toBe('< 0.001')
    expect(f.month('2024-03')).toBe('Mar 2024')
    expect(f.when('2025-03-04T12:30:59Z')).toBe('2025-03-04 12:30 UTC')
    // counts: whole numbers as they are, others to one decimal; with digits, always that many
    expect([207, 44.44, 0].map((x) => f.num(x))).toEqual(['207', '44.4', '0'])
    expect([0, -0.2, 0.3, 1].map((x) => f.num(x, 2))).toEqual(['0.00', '-0.20', '0.30', '1.00'])
    for (const bad of [null, undefined, NaN, Infinity]) {
      expect(f.share(bad)).toBe('–')
      expect(f.growth(bad)).toBe('–')
      expect(f.num(bad)).toBe('–')
    }
  })
})

describe('payload readers', () => {
  it('read series and forecasts row-wise and column-wise', () => {
    expect(readMonthSeries([{ month: '2024-01', share: 0.1 }, { month: '2024-02', value: 0.2 }])).toEqual({ months: ['2024-01', '2024-02'], values: [0.1, 0.2] })
    expect(readMonthSeries({ months: ['2024-01'], values: [0.3] })).toEqual({ months: ['2024-01'], values: [0.3] })
    expect(readMonthSeries({ months: ['2024-01'], values: [0.3, 0.4] })).toBeNull()
    const rows = readForecast([{ month: '2025-01', mean: 1, lo80: 0.8, hi80: 1.2, lo95: 0.6, hi95: 1.4 }])
    const cols = readForecast({ months: ['2025-01'], mean: [1], lo80: [0.8], hi80: [1.2], lo95: [0.6], hi95: [1.4] })
    expect(rows).toEqual(cols)
  })
  it('survive malformed JSON', () => {
    expect(readCurveDetails('{not json')).toEqual({ fitted: null, forecast: null, tests: [], model: null, combined: null, stateReason: null })
    expect(readCurveDetails('[1,2]').tests).toEqual([])
    expect(scoreParts('x')).toEqual({})
    expect(readTrend('{"a":1}')).toEqual([])
    expect(readExamples('nope')).toEqual([])
  })
  it('read the plan stage\'s score parts', () => {
    expect(scoreParts({ parts: { momentum: { value: 0.5, weight: 0.4, contribution: 0.2, inputs: {} }, gap: 0.1 } })).toEqual({
      momentum: { value: 0.5, weight: 0.4, contribution: 0.2 },
      gap: { value: null, weight: null, contribution: 0.1 },
    })
  })
  it('read candidate trends and examples in either shape', () => {
    expect(readTrend('[1, 2, {"df": 3}, "x"]')).toEqual([1, 2, 3, null])
    expect(readExamples('["a", {"title": "T", "snippet": "S"}, 5]')).toEqual(['a', 'T: S'])
  })
})

describe('describeCurve', () => {
  const base: CurveSummary = {
    state: 'declining', annualGrowth: -0.3, growthLow: -0.45, growthHigh: -0.15, halfLifeMonths: 23.3, halfLifeLow: 16, halfLifeHigh: 35,
    pValue: 0.001, pAdjusted: 0.004, latestShare: 0.015, forecastShare12: 0.0106, forecastMethod: 'damped trend', changeMonth: '2023-11',
    emergedMonth: null, fittedAt: '2025-01-15T10:00:00Z', model: null,
  }
  it('says what the numbers mean, including significance against the FDR level', () => {
    const words = describeCurve(base, 0.05).join(' ')
    expect(words).toContain('shrinks by about −30.0% a year (95% interval −45.0% to −15.0%)')
    expect(words).toContain('unlikely to be chance')
    expect(words).toContain('demand halves about every 23 months (95% interval 16 months to 35 months)')
    expect(words).toContain('changed course around Nov 2023')
    expect(words).toContain('p = 0.004, below the 0.05 false-discovery level')
    // a p-value shown as "< 0.001" reads "p < 0.001", never "p = < 0.001"
    const tiny = describeCurve({ ...base, pAdjusted: 2e-9 }, 0.05).join(' ')
    expect(tiny).toContain('at once, p < 0.001, below')
    expect(tiny).not.toContain('= <')
  })
  it('warns when the trend may be chance or the interval spans zero', () => {
    const words = describeCurve({ ...base, state: 'steady', annualGrowth: 0.01, growthLow: -0.09, growthHigh: 0.11, pAdjusted: 0.4, halfLifeMonths: null }, 0.05).join(' ')
    expect(words).toContain('could well be chance')
    expect(words).toContain('consistent with no change at all')
    expect(words).not.toContain('halves')
  })
})

describe('redactLocation', () => {
  it('drops credentials, query and fragment from URLs and leaves paths alone', () => {
    expect(redactLocation('https://a:b@example.test/feed?key=1#x')).toBe('https://example.test/feed?…')
    expect(redactLocation('http://127.0.0.1:4780/feeds/board.rss')).toBe('http://127.0.0.1:4780/feeds/board.rss')
    expect(redactLocation('inbox/postings')).toBe('inbox/postings')
  })
})
