import { describe, it, expect } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { main, type Io } from '../../src/cli.ts'
import { REPORTS } from '../../src/commands/registry.ts'
import { parseConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { emit } from '../../src/events/outbox.ts'
import { ripple } from '../../src/pipeline.ts'
import { compactSeries, curveRow, demandInputs, runFit } from '../../src/curves/stage.ts'
import type { SkillCurve } from '../../src/curves/fit-skill.ts'
import { readCurveDetails, readMonthSeries } from '../../src/server/payloads.ts'
import { curveRowDetails, encodeSeries } from '../../src/curves/stored-series.ts'
import { fitAll } from '../../src/curves/fit-all.ts'
import { ForecastBands } from '../../src/curves/forecast.ts'
import { CURVE_STATES_SQL, DemandDelta, readCurveStates, rebuildDemandCounts, recomputeMonthlyDemand, type CurveRow } from '../../src/db/curves.ts'
import { bumpTaxonomyVersion } from '../../src/db/taxonomy.ts'
import { referenceInputs } from './reference-inputs.ts'
import { demandFor } from '../../src/db/dashboard.ts'
import { monthRange } from './simulate.ts'
import { seededRandom } from '../stats/seeded-random.ts'

const MONTHS = monthRange('2023-01', 36)

/** Shares of the synthetic skills per month t (postings); requests carry a fifth of them. */
const SKILLS: Record<string, { label: string; share: (t: number) => number }> = {
  kubernetes: { label: 'Kubernetes', share: (t) => 0.08 * 2 ** (t / 18) },
  jquery: { label: 'jQuery', share: (t) => 0.2 * 2 ** (-t / 15) },
  sql: { label: 'SQL', share: () => 0.2 },
  cobol: { label: 'COBOL', share: () => 0.001 },
  ghost: { label: 'Ghost skill', share: () => 0 },
}

/**
 * Documents (300 postings and 60 requests a month, plus reposts that must not count) and their
 * mentions, written straight into the schema as the ingest and map stages would.
 */
function loadCorpus(db: Db, seed = 1): { mentions: Record<string, number[]> } {
  const random = seededRandom(seed)
  const mentions: Record<string, number[]> = Object.fromEntries(Object.keys(SKILLS).map((id) => [id, MONTHS.map(() => 0)]))
  db.transaction(() => {
    db.prepare("INSERT INTO sources (id, kind, location) VALUES ('fern', 'import', 'test')").run()
    for (const [id, skill] of Object.entries(SKILLS)) db.prepare("INSERT INTO concepts (id, pref_label, type) VALUES (?, ?, 'hard')").run(id, skill.label)
    const document = db.prepare(
      `INSERT INTO documents (source_id, external_id, kind, posted_at, month, text_hash, duplicate_of)
       VALUES ('fern', ?, ?, ?, ?, ?, ?)`,
    )
    const mention = db.prepare("INSERT INTO mentions (document_id, concept_id, count, via) VALUES (?, ?, 1, 'text')")
    let serial = 0
    MONTHS.forEach((month, t) => {
      for (const [kind, count, scale] of [['posting', 300, 1], ['request', 60, 0.2]] as const) {
        for (let d = 0; d < count; d++) {
          const id = Number(document.run(`doc-${serial}`, kind, `${month}-10T09:00:00Z`, month, `h${serial}`, null).lastInsertRowid)
          serial++
          for (const [skill, { share }] of Object.entries(SKILLS)) {
            if (random.uniform() < scale * share(t)) {
              mention.run(id, skill)
              if (kind === 'posting') mentions[skill]![t]!++
            }
          }
          // every 50th posting is reposted; the repost mentions everything and must not count
          if (kind === 'posting' && d % 50 === 0) {
            const repost = Number(document.run(`doc-${serial}`, kind, `${month}-11T09:00:00Z`, month, `h${serial}`, id).lastInsertRowid)
            serial++
            for (const skill of Object.keys(SKILLS)) mention.run(repost, skill)
          }
        }
      }
    })
    // all of them mapped: none waits in the map's queue
    db.prepare('DELETE FROM unmapped_documents').run()
    // rows written straight into the tables bypass the writers that keep the demand aggregates in
    // step; the repair recomputes them, as after an upgrade
    rebuildDemandCounts(db)
  })()
  return { mentions }
}

function events(db: Db, type: string): Record<string, unknown>[] {
  return (db.prepare('SELECT payload_json FROM events WHERE type = ? ORDER BY id').all(type) as { payload_json: string }[]).map((row) => JSON.parse(row.payload_json) as Record<string, unknown>)
}

const config = parseConfig({ db: ':memory:' })
const NOW = new Date('2026-01-15T00:00:00Z')

describe('fit stage', () => {
  it('writes the curves in one go and emits curves.fitted and the flagged states', () => {
    const db = openDb(':memory:')
    const { mentions } = loadCorpus(db)
    const result = runFit(db, config, { now: NOW })
    expect(result.counts['skills']).toBe(5)

    // the demand fitted and charted: originals only, reposts left out of both counts and totals
    const sql = demandFor(db, ['sql'], 'external')
    expect(sql).toHaveLength(36)
    expect(sql.map((row) => row.n)).toEqual(mentions['sql'])
    expect(sql.every((row) => row.total === 300)).toBe(true)
    expect(demandFor(db, ['sql'], 'internal')).toHaveLength(36)
    expect(demandFor(db, ['ghost'])).toEqual([])

    const curves = Object.fromEntries((db.prepare('SELECT concept_id, state, half_life_months, fitted_at FROM curves').all() as { concept_id: string; state: string; half_life_months: number | null; fitted_at: string }[]).map((row) => [row.concept_id, row]))
    expect(curves['kubernetes']!.state).toBe('rising')
    expect(curves['jquery']!.state).toBe('declining')
    expect(curves['sql']!.state).toBe('steady')
    expect(curves['cobol']!.state).toBe('insufficient-evidence')
    expect(curves['ghost']!.state).toBe('insufficient-evidence')
    // planted half-life 15 months
    expect(curves['jquery']!.half_life_months!).toBeGreaterThan(10)
    expect(curves['jquery']!.half_life_months!).toBeLessThan(22)
    expect(curves['sql']!.half_life_months).toBeNull()
    expect(curves['sql']!.fitted_at).toBe(NOW.toISOString())

    const fitted = events(db, 'curves.fitted')
    expect(fitted).toHaveLength(1)
    expect(fitted[0]).toMatchObject({ skills: 5, tested: 3, latestMonth: '2025-12', states: { rising: 1, declining: 1, steady: 1, 'insufficient-evidence': 2 } })
    // first fit: only flagged skills are announced
    const changes = events(db, 'skill.state-changed')
    expect(changes.map((event) => [event['id'], event['before'], event['after']]).sort()).toEqual([
      ['jquery', null, 'declining'],
      ['kubernetes', null, 'rising'],
    ])
    const jquery = changes.find((event) => event['id'] === 'jquery')!
    expect(jquery['reason']).toMatch(/share falls/)
    expect(jquery['evidence']).toMatchObject({ halfLifeMonths: expect.any(Number), pAdjusted: expect.any(Number) })
  })

  it('announces a state change with before and after on a later run, and nothing when states stay', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    runFit(db, config, { now: NOW })
    // (rebuild: fit again though nothing changed, which a plain run keeps)
    runFit(db, config, { now: NOW, rebuild: true })
    expect(events(db, 'skill.state-changed')).toHaveLength(2)
    // pretend jQuery was steady at the last fit
    db.prepare("UPDATE curves SET state = 'steady' WHERE concept_id = 'jquery'").run()
    runFit(db, config, { now: NOW, rebuild: true })
    const last = events(db, 'skill.state-changed').at(-1)!
    expect(last).toMatchObject({ id: 'jquery', label: 'jQuery', before: 'steady', after: 'declining' })
    expect(events(db, 'curves.fitted')).toHaveLength(3)
    // the stored states come from the states' index alone, not from the rows with their details (migration 11)
    expect(readCurveStates(db).get('jquery')).toBe('declining')
    const plan = db.prepare(`EXPLAIN QUERY PLAN ${CURVE_STATES_SQL}`).all() as { detail: string }[]
    expect(plan.map((row) => row.detail).join(' ')).toMatch(/COVERING INDEX curves_state/)
  })

  it('keeps its curves while demand, taxonomy, settings and code are those of the last fit, and fits again when one changes', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    const first = runFit(db, config, { now: NOW })
    const stored = () => db.prepare('SELECT * FROM curves ORDER BY concept_id').all()
    const curves = stored()
    const fitted = () => events(db, 'curves.fitted').length
    // nothing changed: no writes, no events, the first run's counts with nothing announced
    const kept = runFit(db, config, { now: new Date('2026-02-01T00:00:00Z') })
    expect(kept.summary).toBe(`demand, taxonomy and settings unchanged since the fit at ${NOW.toISOString()}: curves kept`)
    expect(kept.counts).toEqual({ skills: first.counts['skills'], tested: first.counts['tested'], stateChanges: 0, failures: 0, badMonths: 0, skipped: 1 })
    expect(stored()).toEqual(curves)
    expect(fitted()).toBe(1)
    // new demand, through the writer that keeps the aggregates: fitted again
    const delta = new DemandDelta()
    for (let i = 0; i < 40; i++) delta.document('posting', '2025-12', ['kubernetes'], 1)
    db.transaction(() => delta.apply(db))()
    const later = new Date('2026-03-01T00:00:00Z')
    expect(runFit(db, config, { now: later }).counts['skipped']).toBeUndefined()
    expect(fitted()).toBe(2)
    expect(stored()).not.toEqual(curves)
    expect(runFit(db, config, { now: later }).counts['skipped']).toBe(1)
    // another setting, another taxonomy version: fitted again
    expect(runFit(db, parseConfig({ curves: { q: 0.1 } }), { now: later }).counts['skipped']).toBeUndefined()
    expect(runFit(db, parseConfig({ curves: { q: 0.1 } }), { now: later }).counts['skipped']).toBe(1)
    bumpTaxonomyVersion(db)
    expect(runFit(db, parseConfig({ curves: { q: 0.1 } }), { now: later }).counts['skipped']).toBeUndefined()
    expect(fitted()).toBe(4)
    // a hand-made SQL change of the aggregates is not seen; rebuild recomputes them and fits
    db.prepare("UPDATE demand_counts SET n = n + 5 WHERE concept_id = 'sql' AND series = 'external'").run()
    expect(runFit(db, parseConfig({ curves: { q: 0.1 } }), { now: later }).counts['skipped']).toBe(1)
    expect(runFit(db, parseConfig({ curves: { q: 0.1 } }), { now: later, rebuild: true }).counts['skipped']).toBeUndefined()
    expect(fitted()).toBe(5)
  })

  it('leaves out documents that are not mapped yet and months that are not YYYY-MM', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    db.prepare("INSERT INTO unmapped_documents (id) SELECT id FROM documents WHERE month = '2025-12' AND kind = 'posting' AND duplicate_of IS NULL").run()
    db.prepare("UPDATE documents SET month = '2025-13' WHERE month = '2025-11' AND kind = 'request'").run()
    rebuildDemandCounts(db) // the updates above bypass the writers that keep the aggregates
    // the fit reads the well-formed months as the recomputation has them, and names the other one
    const read = demandInputs(db)
    expect(read.inputs).toEqual(referenceInputs(recomputeMonthlyDemand(db)))
    expect(read.badMonths).toEqual(['2025-13'])
    expect(read.months).not.toContain('2025-13')
    expect(recomputeMonthlyDemand(db).mentions.get('sql')!.internal.get('2025-13')).toBeGreaterThan(0)
    const logs: string[] = []
    const result = runFit(db, config, { now: NOW, log: (message) => logs.push(message) })
    expect(result.status).toBe('partial')
    expect(logs.join('\n')).toMatch(/month is not YYYY-MM: "2025-13"/)
    const charted = demandFor(db, ['sql'])
    expect(charted.filter((row) => row.month === '2025-12' && row.series === 'external')).toEqual([])
    expect(charted.filter((row) => row.month === '2025-13')).toEqual([])
    expect(charted.filter((row) => row.series === 'internal')).toHaveLength(35)
    expect((db.prepare("SELECT state FROM curves WHERE concept_id = 'sql'").get() as { state: string }).state).toBe('steady')
  })

  it('reads the well-formed months like the recomputation when other months (with spaces in them or not) have counts', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    db.prepare("UPDATE documents SET month = 'late 2025' WHERE month = '2025-10' AND kind = 'request'").run()
    db.prepare("UPDATE documents SET month = '2025-13' WHERE month = '2025-11' AND kind = 'request'").run()
    rebuildDemandCounts(db)
    const full = recomputeMonthlyDemand(db)
    expect(full.mentions.get('sql')!.internal.get('late 2025')).toBeGreaterThan(0)
    const read = demandInputs(db)
    expect(read.inputs).toEqual(referenceInputs(full))
    expect(read.badMonths).toEqual(['2025-13', 'late 2025'])
    const sql = read.inputs.find((input) => input.id === 'sql')!
    expect(sql.internal!.n[sql.months.indexOf('2025-09')]).toBeGreaterThan(0)
  })

  it('runs when documents.mapped is announced, and the plan follows curves.fitted', async () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    db.transaction(() => emit(db, 'documents.mapped', { mapped: 12960 }))()
    const outcomes = await ripple(db, config)
    const fit = outcomes.find((outcome) => outcome.stage === 'fit')
    expect(fit?.error).toBeUndefined()
    expect(fit?.trigger).toBe('event:documents.mapped')
    expect(outcomes.map((outcome) => outcome.stage)).toContain('plan')
    expect(db.prepare('SELECT COUNT(*) AS c FROM curves').get()).toEqual({ c: 5 })
  })

  it('reports skills with DESIGN.md fields and method details', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    const empty = REPORTS['skills']!.build(db, config, {})
    expect(empty.rows).toEqual([])
    expect(empty.footer).toMatch(/run `tides run fit`/)
    runFit(db, config, { now: NOW })
    const report = REPORTS['skills']!.build(db, config, {})
    const json = report.json as Record<string, unknown>[]
    expect(json.map((row) => row['id'])).toEqual(['kubernetes', 'jquery', 'sql', 'cobol', 'ghost'])
    for (const row of json) {
      for (const key of ['id', 'label', 'state', 'annualGrowth', 'halfLifeMonths', 'halfLifeInterval', 'pAdjusted', 'latestShare', 'forecastShare12']) expect(row).toHaveProperty(key)
    }
    const jquery = json[1]!
    expect(jquery['halfLifeInterval']).toEqual([expect.any(Number), expect.any(Number)])
    expect(jquery['methods']).toMatchObject({ trend: expect.stringMatching(/quasi-Poisson/), mannKendall: { tau: expect.any(Number) }, senSlope: { slope: expect.any(Number) } })
    expect(['regression', 'damped-holt']).toContain(jquery['forecastMethod'])
    expect((jquery['forecast'] as unknown[]).length).toBe(12)
    expect(json[2]!['halfLifeMonths']).toBeNull()
    expect(report.columns.slice(0, 3)).toEqual(['id', 'label', 'state'])
    expect(REPORTS['skills']!.build(db, config, { limit: 2 }).rows).toHaveLength(2)
  })

  it('works from the command line: tides run fit, tides report skills --json and --csv', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-fit-'))
    const file = path.join(dir, 'tides.db')
    const db = openDb(file)
    loadCorpus(db)
    db.close()
    let out = ''
    let err = ''
    const io: Io = { out: (text) => (out += text), err: (text) => (err += text), isTty: false }
    expect(await main(['--db', file, 'run', 'fit'], io)).toBe(0)
    expect(out + err).toMatch(/fitted 5 skills/)
    out = ''
    expect(await main(['--db', file, 'report', 'skills', '--json'], io)).toBe(0)
    const parsed = JSON.parse(out) as { id: string; state: string }[]
    expect(parsed.find((row) => row.id === 'jquery')?.state).toBe('declining')
    out = ''
    expect(await main(['--db', file, 'report', 'skills', '--csv'], io)).toBe(0)
    const lines = out.trim().split('\n')
    expect(lines[0]).toMatch(/^id,label,state,annualGrowth,growthLow,growthHigh,halfLifeMonths/)
    expect(lines).toHaveLength(6)
    fs.rmSync(dir, { recursive: true, force: true })
  })
})

describe('month series stored in binary (curves.series, migration 10)', () => {
  it('keeps the series out of details_json, and every reader gets back the JSON shape the fit wrote before, value for value', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    runFit(db, config, { now: NOW })
    // the same fit in memory: the old stored form of its series was compactSeries() and the points, through JSON
    const inMemory = new Map(fitAll(demandInputs(db).inputs, config.curves).curves.map((curve) => [curve.id, curve]))
    const rows = db.prepare('SELECT * FROM curves ORDER BY concept_id').all() as CurveRow[]
    expect(rows.map((row) => row.concept_id)).toEqual(['cobol', 'ghost', 'jquery', 'kubernetes', 'sql'])
    for (const row of rows) {
      const curve = inMemory.get(row.concept_id)!
      const json = JSON.parse(row.details_json) as Record<string, unknown>
      expect(json, row.concept_id).not.toHaveProperty('fitted')
      expect(json).not.toHaveProperty('forecast')
      expect(json['seriesLayout']).toMatchObject({ format: 'f64le', start: '2023-01', months: 36 })
      const read = curveRowDetails(row)
      const before = JSON.parse(JSON.stringify({ fitted: compactSeries(curve.details['fitted']), combined: compactSeries(curve.details['combined']), forecast: curve.details['forecast'] }))
      expect({ fitted: read['fitted'], combined: read['combined'], forecast: read['forecast'] }, row.concept_id).toEqual(before)
      expect(read).not.toHaveProperty('seriesLayout')
      expect(read['tests']).toEqual(json['tests'])
    }
    // a fitted skill has all three; the skill that never appears has its (empty) index and no forecast
    const kubernetes = curveRowDetails(rows[3]!)
    expect((kubernetes['fitted'] as { values: number[] }).values).toHaveLength(36)
    expect((kubernetes['forecast'] as { month: string }[]).map((p) => p.month)).toEqual(monthRange('2026-01', 12))
    expect(curveRowDetails(rows[1]!)['forecast']).toEqual([])
    const page = readCurveDetails(kubernetes)
    expect(page.fitted!.months).toEqual(MONTHS)
    expect(page.combined!.months).toEqual(MONTHS)
    expect(page.forecast!.lo95).toEqual((kubernetes['forecast'] as { lo95: number }[]).map((p) => p.lo95))
  })

  it('writes the details as the one object of the details and the curve\'s figures, key for key, with the series in the column or compacted in the JSON', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    const curves = fitAll(demandInputs(db).inputs, config.curves).curves
    // the earlier form: one object, the details' keys first, then the added ones
    const merged = (curve: SkillCurve, series: Record<string, unknown>) =>
      JSON.stringify({ ...curve.details, ...series, stateReason: curve.stateReason, beta: curve.beta, betaInterval: curve.betaInterval, mannKendall: curve.mannKendall, senSlope: curve.senSlope, latestMonth: curve.latestMonth })
    for (const curve of curves) {
      const row = curveRow(curve, NOW.toISOString())
      const layout = encodeSeries(curve.details)!.layout
      expect(row.details_json, curve.id).toBe(merged(curve, { fitted: undefined, combined: undefined, forecast: undefined, seriesLayout: layout }))
      // months that are not consecutive keep their series in the JSON
      const combined = curve.details['combined'] as { months: string[]; values: number[] }
      const gappy = { ...curve, details: { ...curve.details, fitted: null, combined: { months: combined.months.map((m, i) => (i === 0 ? '2019-12' : m)), values: combined.values } } }
      const kept = curveRow(gappy, NOW.toISOString())
      expect(kept.series).toBeNull()
      expect(kept.details_json).toBe(merged(gappy, { fitted: null, combined: compactSeries(gappy.details.combined) }))
    }
    // details without keys of their own: the added figures alone
    const bare = { ...curves[0]!, details: {} }
    expect(JSON.parse(curveRow(bare, NOW.toISOString()).details_json)).toEqual(JSON.parse(merged(bare, {})))
  })

  it('stores the fit\'s forecast columns exactly as the same forecast given as points', () => {
    const db = openDb(':memory:')
    loadCorpus(db)
    const curve = fitAll(demandInputs(db).inputs, config.curves).curves.find((c) => c.id === 'kubernetes')!
    const bands = curve.details['forecast'] as ForecastBands
    expect(bands).toBeInstanceOf(ForecastBands)
    expect(bands).toBe(curve.forecast)
    expect(bands.points().map((p) => [p.share, p.lo95, p.low, p.high])).toEqual(bands.share.map((share, h) => [share, bands.lo95[h], bands.lo95[h], bands.hi95[h]]))
    const fromColumns = encodeSeries(curve.details)!
    const fromPoints = encodeSeries({ ...curve.details, forecast: JSON.parse(JSON.stringify(bands)) })!
    expect(fromColumns.layout).toEqual(fromPoints.layout)
    expect(fromColumns.blob.equals(fromPoints.blob)).toBe(true)
    expect(bands.first(3).points().map((p) => p.monthsAhead)).toEqual([1, 2, 3])
  })

  it('reads rows written before the column as they are, and leaves out series whose bytes do not match their layout', () => {
    const old = { fitted: { start: '2024-01', values: [1, 2] }, tests: [] }
    expect(curveRowDetails({ details_json: JSON.stringify(old), series: null })).toEqual(old)
    const layout = { format: 'f64le', start: '2024-01', months: 2, fitted: true, forecastMonths: 1 }
    const blob = Buffer.from(Float64Array.from([1, 2, 3, Number.NaN, 5, 6, 7, 8, 9]).buffer)
    expect(curveRowDetails({ details_json: JSON.stringify({ seriesLayout: layout, model: 'm' }), series: blob })).toEqual({
      model: 'm',
      fitted: { start: '2024-01', values: [1, 2] },
      combined: { start: '2024-01', values: [3, null] },
      forecast: [{ month: '2024-03', monthsAhead: 1, share: 5, lo80: 6, hi80: 7, lo95: 8, hi95: 9, low: 8, high: 9 }],
    })
    // too short, a layout that is not one, no blob: the series are left out, the rest is kept
    for (const [seriesLayout, series] of [[layout, blob.subarray(8)], [{ ...layout, format: 'f32' }, blob], [{ ...layout, months: -1 }, blob], [layout, null]] as const) {
      expect(curveRowDetails({ details_json: JSON.stringify({ seriesLayout, model: 'm' }), series })).toEqual({ model: 'm' })
    }
    expect(curveRowDetails({ details_json: '{"seriesLayout": ', series: blob })).toEqual({})
  })

  it('keeps series as JSON when they do not have the column\'s shape (months with a gap)', () => {
    const gap = { months: ['2024-01', '2024-03'], values: [1, 2] }
    expect(encodeSeries({ combined: gap, fitted: null, forecast: [] })).toBeNull()
    const months = ['2024-01', '2024-02']
    expect(encodeSeries({ combined: { months, values: [1, 2] }, fitted: null, forecast: [{ month: '2024-05', monthsAhead: 1 }] })).toBeNull()
    const encoded = encodeSeries({ combined: { months, values: [1, null] }, fitted: { months, values: [3, 4] }, forecast: [] })!
    expect(encoded.layout).toEqual({ format: 'f64le', start: '2024-01', months: 2, fitted: true, forecastMonths: 0 })
    // IEEE 754 binary64: 1.0 is 0x3FF0000000000000, so little-endian bytes 00 00 00 00 00 00 f0 3f
    expect([...encoded.blob.subarray(16, 24)]).toEqual([0, 0, 0, 0, 0, 0, 0xf0, 0x3f])
  })

  it('leaves a series with a gap in its months, or without months, as it is', () => {
    const gap = { months: ['2024-01', '2024-03'], values: [1, 2] }
    expect(compactSeries(gap)).toBe(gap)
    expect(compactSeries(null)).toBeNull()
    expect(compactSeries({ months: ['2024-11', '2024-12', '2025-01'], values: [1, 2, 3] })).toEqual({ start: '2024-11', values: [1, 2, 3] })
    expect(readMonthSeries({ start: '2024-11', values: [1, 2, 3] })).toEqual({ months: ['2024-11', '2024-12', '2025-01'], values: [1, 2, 3] })
    expect(readMonthSeries({ start: '2024-13', values: [1] })).toBeNull()
  })
})
