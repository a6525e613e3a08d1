/**
 * The plan reads the curves' details only where it uses them (db/plan.ts readCurves with the rising
 * states: no details of curves that are not evidence, forecast bands only for rising curves): the
 * whole plan must come out the same as from the full reading, on the scenario with details on
 * every curve (bands, levels and fitted latest shares on declining, steady and non-evidence curves
 * too, malformed details on one), and the curve model of every row must agree on what the plan uses.
 */
import fc from 'fast-check'
import { describe, expect, it, vi } from 'vitest'
import * as actual from '../../src/db/plan.ts'
import { computePlan } from '../../src/plan/compute.ts'
import { RISING_STATES, readSkillCurve } from '../../src/plan/curve-model.ts'
import { addCurve, freshDb, testConfig } from './fixtures.ts'
import { loadScenario } from './scenario.ts'

const mode = vi.hoisted(() => ({ full: false }))
vi.mock('../../src/db/plan.ts', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../src/db/plan.ts')>()
  return { ...original, readCurves: (db: never, states?: readonly string[]) => original.readCurves(db, mode.full ? undefined : states) }
})

const STATES = ['emerging', 'rising', 'steady', 'declining', 'fading', 'insufficient-evidence']

function details(seed: number): string {
  if (seed % 11 === 0) return '{"forecast": ['
  const bands = [1, 2, 3, 6, 12].map((h) => ({ monthsAhead: h, share: 0.01 + 0.001 * ((seed + h) % 7), low: 0.004, high: 0.03 }))
  return JSON.stringify({ model: 'test', fitted: { values: [1, 2, 3] }, forecast: bands, forecastLevel: seed % 2 ? 0.8 : 0.95, fittedLatestShare: 0.002 + 0.001 * (seed % 5), latestMonth: '2025-12' })
}

describe('the plan reads only the curve details it uses', () => {
  it('gives the same plan as from the full details', () => {
    const db = freshDb()
    loadScenario(db)
    const ids = db.prepare('SELECT concept_id FROM curves ORDER BY concept_id').pluck().all() as string[]
    ids.forEach((id, i) => db.prepare('UPDATE curves SET details_json = ? WHERE concept_id = ?').run(details(i + 1), id))
    // more curves of every state, some without shares, each with details
    for (let i = 0; i < 30; i++) {
      const state = STATES[i % STATES.length]!
      addCurve(db, { concept_id: `extra-${i}`, state, annual_growth: 0.1 * ((i % 5) - 2), latest_share: i % 4 === 3 ? null : 0.01, forecast_share12: 0.012, p_adjusted: 0.01, details_json: details(i) })
    }
    const config = testConfig()
    const now = new Date('2026-01-15T00:00:00Z')
    mode.full = true
    const full = computePlan(db, config, now)
    mode.full = false
    const picked = computePlan(db, config, now)
    expect(picked).toEqual(full)
    // the scenario has pathways, a forecast and course flags: the comparison covers them
    expect(full.pathways.length).toBeGreaterThan(0)
    expect(full.forecast.length).toBeGreaterThan(0)
    expect(full.courseFlags.length).toBeGreaterThan(0)
  })

  it('gives every row the curve model of its full details, on what the plan uses', () => {
    fc.assert(
      fc.property(
        fc.array(fc.record({ state: fc.constantFrom(...STATES), latest: fc.option(fc.double({ min: 0, max: 0.5, noNaN: true })), forecast: fc.option(fc.double({ min: 0, max: 0.5, noNaN: true })), seed: fc.nat(100) }), { minLength: 1, maxLength: 20 }),
        (rows) => {
          const db = freshDb()
          rows.forEach((r, i) => addCurve(db, { concept_id: `c${i}`, state: r.state, latest_share: r.latest, forecast_share12: r.forecast, details_json: details(r.seed) }))
          const whole = new Map(actual.readCurves(db).map((r) => [r.concept_id, readSkillCurve(r)]))
          for (const row of actual.readCurves(db, RISING_STATES)) {
            const mine = readSkillCurve(row)
            const theirs = whole.get(row.concept_id)!
            const { bands, bandLevel, lastMonth, baseShare, ...columns } = theirs
            expect(mine).toMatchObject(columns)
            if (!theirs.evidenced) continue
            expect(mine.baseShare).toBe(baseShare)
            if (RISING_STATES.includes(theirs.state)) expect({ bands: mine.bands, bandLevel: mine.bandLevel, lastMonth: mine.lastMonth }).toEqual({ bands, bandLevel, lastMonth })
          }
          db.close()
        },
      ),
      { numRuns: 50 },
    )
  })
})
