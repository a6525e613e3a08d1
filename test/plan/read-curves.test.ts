/**
 * The plan reads only the keys of curves.details_json it uses, picked out by SQLite
 * (db/plan.ts readCurves): the curve model it builds must equal the one from the whole details, and
 * malformed details must still read as absent, never fail the plan.
 */
import { describe, it, expect } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { readCurves, type CurveRecord } from '../../src/db/plan.ts'
import { readSkillCurve } from '../../src/plan/curve-model.ts'

const FORECAST = [1, 2, 3].map((h) => ({ month: `2025-0${h}`, monthsAhead: h, share: 0.01 * h, lo80: 0.008 * h, hi80: 0.012 * h, lo95: 0.007 * h, hi95: 0.013 * h, low: 0.007 * h, high: 0.013 * h }))

const DETAILS: Record<string, string> = {
  full: JSON.stringify({ model: 'quasi-Poisson', fitted: { months: ['2024-12'], values: [0.01] }, combined: { months: ['2024-12'], values: [0.011] }, tests: [{ name: 'Mann-Kendall', p: 0.01 }], forecast: FORECAST, forecastLevel: 0.9, fittedLatestShare: 0.0105, latestMonth: '2024-12' }),
  aliases: JSON.stringify({ bands: FORECAST.map(({ monthsAhead, share, low, high }) => ({ h: monthsAhead, mid: share, lower: low, upper: high })), level: 0.8, lastMonth: '2024-11' }),
  malformed: '{"forecast": [',
  array: '[1, 2, 3]',
  empty: '',
}

describe('readCurves picks out the details the plan uses', () => {
  it('builds the same curve model as the whole details, and reads malformed details as absent', () => {
    const db = openDb(':memory:')
    const insert = db.prepare(
      `INSERT INTO curves (concept_id, state, annual_growth, latest_share, forecast_share12, details_json, fitted_at) VALUES (?, 'rising', 0.2, 0.01, 0.012, ?, '2025-01-01T00:00:00Z')`,
    )
    for (const [id, json] of Object.entries(DETAILS)) insert.run(id, json)
    const picked = new Map(readCurves(db).map((r) => [r.concept_id, r]))
    const whole = db.prepare('SELECT * FROM curves').all() as CurveRecord[]
    for (const row of whole) {
      const fromPicked = readSkillCurve(picked.get(row.concept_id)!)
      expect(fromPicked, row.concept_id).toEqual(readSkillCurve(row))
    }
    expect(readSkillCurve(picked.get('full')!)).toMatchObject({ baseShare: 0.0105, bandLevel: 0.9, lastMonth: '2024-12' })
    expect(readSkillCurve(picked.get('full')!).bands).toHaveLength(3)
    expect(readSkillCurve(picked.get('aliases')!).bands.map((b) => b.monthsAhead)).toEqual([1, 2, 3])
    for (const bad of ['malformed', 'array', 'empty']) expect(readSkillCurve(picked.get(bad)!).bands).toEqual([])
    // the big parts stay in the database
    expect(picked.get('full')!.details_json).not.toMatch(/fitted"|combined|Mann-Kendall/)
  })

  it('reads the forecast bands of the binary series column (migration 10) as those of the JSON, with or without band states', () => {
    const db = openDb(':memory:')
    const insert = db.prepare(
      `INSERT INTO curves (concept_id, state, annual_growth, latest_share, forecast_share12, details_json, series, fitted_at) VALUES (?, ?, 0.2, 0.01, 0.012, ?, ?, '2025-01-01T00:00:00Z')`,
    )
    const common = { forecastLevel: 0.9, fittedLatestShare: 0.0105, latestMonth: '2024-12' }
    insert.run('json', 'rising', JSON.stringify({ ...common, combined: { months: ['2024-12'], values: [0.011] }, forecast: FORECAST }), null)
    // combined over 2024-12, then share, lo80, hi80, lo95, hi95 of the three forecast months
    const columns = [[0.011], ...(['share', 'lo80', 'hi80', 'lo95', 'hi95'] as const).map((key) => FORECAST.map((p) => p[key]))].flat()
    const layout = { format: 'f64le', start: '2024-12', months: 1, fitted: false, forecastMonths: 3 }
    for (const state of ['rising', 'steady']) insert.run(`binary-${state}`, state, JSON.stringify({ ...common, seriesLayout: layout }), Buffer.from(Float64Array.from(columns).buffer))
    const expected = readSkillCurve(readCurves(db).find((r) => r.concept_id === 'json')!)
    expect(expected.bands).toHaveLength(3)
    for (const row of readCurves(db).filter((r) => r.concept_id !== 'json')) expect(readSkillCurve(row), row.concept_id).toEqual({ ...expected, id: row.concept_id, state: row.state })
    // with band states, only the rising curve's series is read
    const banded = new Map(readCurves(db, ['rising']).map((r) => [r.concept_id, r]))
    expect(readSkillCurve(banded.get('binary-rising')!).bands).toEqual(expected.bands)
    expect(banded.get('binary-steady')!.series).toBeNull()
  })
})
