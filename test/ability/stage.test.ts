import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { describe, it, expect } from 'vitest'
import { openDb, type Db } from '../../src/db/connection.ts'
import { parseConfig, type Config } from '../../src/config.ts'
import { upsertItems, upsertPeople, upsertResponses, upsertRoles, upsertImportedAbilities } from '../../src/db/workforce.ts'
import { runAbility, abilityStage } from '../../src/ability/stage.ts'
import { coverageReport } from '../../src/ability/report.ts'
import { summariseCoverage } from '../../src/ability/coverage.ts'
import { estimateEap } from '../../src/ability/eap.ts'
import { makeItem, probability, type ItemParams } from '../../src/ability/response-function.ts'
import { mulberry32, normalDraw } from '../../src/ability/simulate.ts'
import { main, type Io } from '../../src/cli.ts'

const NOW = new Date('2026-01-15T00:00:00Z')

/**
 * A small fictional Fernhollow Cooperative workforce: role "data-steward" requires sql at θ 0.5,
 * role "analyst" requires sql at 0 and python at 0.3. SQL items have imported parameters; python
 * items have none (they need --calibrate). All invented.
 */
function seed(db: Db, options: { people?: number } = {}) {
  const rng = mulberry32(404)
  const nPeople = options.people ?? 400
  const sqlItems: ItemParams[] = Array.from({ length: 12 }, (_, j) => makeItem('2pl', { a: 0.8 + 0.08 * j, b: -1.5 + 0.27 * j }))
  const pyTruth: ItemParams[] = Array.from({ length: 10 }, (_, j) => makeItem('2pl', { a: 1 + 0.05 * j, b: -1.2 + 0.25 * j }))
  upsertItems(db, [
    ...sqlItems.map((it, j) => ({ item_id: `sql-${j}`, skill_id: 'sql', a: it.a, b: it.b, c: null })),
    ...pyTruth.map((_, j) => ({ item_id: `py-${j}`, skill_id: 'python', a: null, b: null, c: null })),
  ])
  const people = Array.from({ length: nPeople }, (_, i) => ({
    person_id: `fh-${String(i).padStart(4, '0')}`,
    role: i % 4 === 0 ? 'data-steward' : 'analyst',
    team: i % 2 ? 'orchard' : 'mill',
  }))
  upsertPeople(db, [...people, { person_id: 'fh-solo', role: 'archivist', team: 'mill' }])
  upsertRoles(db, [
    { role: 'data-steward', skill_id: 'sql', required_theta: 0.5 },
    { role: 'analyst', skill_id: 'sql', required_theta: 0 },
    { role: 'analyst', skill_id: 'python', required_theta: 0.3 },
    { role: 'archivist', skill_id: 'sql', required_theta: 0.2 },
  ])
  const responses: Array<{ person_id: string; item_id: string; response: number; taken_at: string }> = []
  people.forEach((person, i) => {
    const theta = normalDraw(rng)
    if (i % 10 !== 9) {
      // 90% took the SQL test in 2025; 1 in 5 of them retook item 0 later (the later attempt counts)
      sqlItems.forEach((item, j) => responses.push({ person_id: person.person_id, item_id: `sql-${j}`, response: rng() < probability(theta, item) ? 1 : 0, taken_at: '2025-06-01' }))
      if (i % 5 === 0) responses.push({ person_id: person.person_id, item_id: 'sql-0', response: 1, taken_at: '2025-07-01' })
    }
    pyTruth.forEach((item, j) => responses.push({ person_id: person.person_id, item_id: `py-${j}`, response: rng() < probability(theta, item) ? 1 : 0, taken_at: '2025-09-10' }))
  })
  upsertResponses(db, responses)
  // imported abilities: one newer than the estimate (wins), one older (loses), one stale and alone
  upsertImportedAbilities(db, [
    { person_id: 'fh-0001', skill_id: 'sql', theta: 2.5, se: 0.2, assessed_at: '2025-12-01' },
    { person_id: 'fh-0002', skill_id: 'sql', theta: -2.5, se: 0.2, assessed_at: '2024-01-01' },
    { person_id: 'fh-0009', skill_id: 'sql', theta: 1.0, se: 0.3, assessed_at: '2022-01-01' },
  ])
  return { sqlItems, pyTruth, people }
}

function setup(configRaw: Record<string, unknown> = {}): { db: Db; config: Config } {
  return { db: openDb(':memory:'), config: parseConfig(configRaw) }
}

describe('ability stage', () => {
  it('estimates abilities with known items, ignores uncalibrated ones, writes coverage and emits ability.updated', () => {
    const { db, config } = setup()
    seed(db)
    const logs: string[] = []
    const result = runAbility(db, config, { now: NOW, log: (m) => logs.push(m) })
    expect(result.counts.itemsWithoutParameters).toBe(10)
    expect(logs.join('\n')).toMatch(/10 items have no parameters .* --calibrate/)
    const estimates = db.prepare("SELECT * FROM abilities WHERE origin = 'estimate'").all() as Array<{ person_id: string; skill_id: string; theta: number; se: number; assessed_at: string; method: string }>
    expect(estimates.every((e) => e.skill_id === 'sql' && e.method === 'eap')).toBe(true)
    expect(estimates).toHaveLength(360)
    // the retake counts: assessed_at is the latest attempt, and the estimate equals an EAP over the latest responses
    const retaker = estimates.find((e) => e.person_id === 'fh-0000')!
    expect(retaker.assessed_at).toBe('2025-07-01')
    const rows = db.prepare("SELECT item_id, response FROM responses WHERE person_id = 'fh-0000' AND item_id LIKE 'sql-%' ORDER BY taken_at").all() as Array<{ item_id: string; response: number }>
    const latest = new Map(rows.map((r) => [r.item_id, r.response]))
    const items = [...latest.keys()].map((id) => {
      const row = db.prepare('SELECT a, b FROM items WHERE item_id = ?').get(id) as { a: number; b: number }
      return { a: row.a, b: row.b, c: 0 }
    })
    const direct = estimateEap(items, [...latest.values()], { quadrature: { points: 61 } })
    expect(retaker.theta).toBeCloseTo(direct.theta, 10)
    expect(retaker.se).toBeCloseTo(direct.se, 10)

    const coverage = db.prepare('SELECT * FROM coverage ORDER BY skill_id, role').all() as Array<Record<string, number | string | null>>
    expect(coverage.map((c) => `${c['skill_id']}/${c['role']}`)).toEqual(['python/analyst', 'sql/analyst', 'sql/archivist', 'sql/data-steward'])
    const python = coverage[0]
    expect(python).toMatchObject({ headcount: 300, assessed: 0, unknown: 300, coverage: null, expected_meeting: 0, expected_gap: 0 })
    const events = db.prepare("SELECT payload_json FROM events WHERE type = 'ability.updated'").all() as Array<{ payload_json: string }>
    expect(events).toHaveLength(1)
    expect(JSON.parse(events[0].payload_json)).toMatchObject({ skills: ['sql'], estimated: 360, imported: 3 })
  })

  it('stored coverage matches an independent recomputation from the abilities table (newest wins, stale inflated)', () => {
    const { db, config } = setup()
    seed(db)
    runAbility(db, config, { now: NOW })
    const abilities = db.prepare('SELECT person_id, skill_id, origin, theta, se, assessed_at FROM abilities').all() as Array<{
      person_id: string; skill_id: string; origin: string; theta: number; se: number; assessed_at: string
    }>
    // independent selection: newest per person and skill, estimate wins ties; stale after 730 days → SE × 1.5
    const pick = new Map<string, (typeof abilities)[number]>()
    for (const a of abilities) {
      const key = `${a.person_id}|${a.skill_id}`
      const held = pick.get(key)
      if (!held || a.assessed_at > held.assessed_at || (a.assessed_at === held.assessed_at && a.origin === 'estimate')) pick.set(key, a)
    }
    expect(pick.get('fh-0001|sql')!.origin).toBe('import') // newer import wins
    expect(pick.get('fh-0002|sql')!.origin).toBe('estimate') // older import loses
    const stewards = (db.prepare("SELECT person_id FROM people WHERE role = 'data-steward'").all() as Array<{ person_id: string }>).map((p) => {
      const a = pick.get(`${p.person_id}|sql`)
      if (!a) return { personId: p.person_id, requiredTheta: 0.5, ability: null }
      const stale = (NOW.getTime() - Date.parse(a.assessed_at)) / 86_400_000 > 730
      return { personId: p.person_id, requiredTheta: 0.5, ability: { theta: a.theta, se: stale ? a.se * 1.5 : a.se, stale } }
    })
    const expected = summariseCoverage(stewards)
    const stored = db.prepare("SELECT * FROM coverage WHERE skill_id = 'sql' AND role = 'data-steward'").get() as Record<string, number>
    expect(stored['headcount']).toBe(expected.headcount)
    expect(stored['assessed']).toBe(expected.assessed)
    expect(stored['expected_meeting']).toBeCloseTo(expected.expectedMeetingAssessed, 10)
    expect(stored['expected_gap']).toBeCloseTo(expected.expectedGapAssessed, 10)
    expect([stored['gap_low'], stored['gap_high']]).toEqual(expected.gapIntervalAssessed)
    // fh-0009 (analyst, no SQL responses) has only a 2022 import: counted as assessed but stale
    const analysts = db.prepare("SELECT stale FROM coverage WHERE skill_id = 'sql' AND role = 'analyst'").get() as { stale: number }
    expect(analysts.stale).toBe(1)
  })

  it('--calibrate calibrates items without parameters, stores fit, then estimates that skill too', () => {
    const { db, config } = setup()
    const { pyTruth } = seed(db)
    const result = runAbility(db, config, { calibrate: true, now: NOW })
    expect(result.counts.calibrated).toBe(10)
    expect(result.counts.calibrationProblems).toBe(0)
    const items = db.prepare("SELECT item_id, a, b, origin, fit_json FROM items WHERE skill_id = 'python' ORDER BY item_id").all() as Array<{
      item_id: string; a: number; b: number; origin: string; fit_json: string
    }>
    const errors = items.map((item) => item.b - pyTruth[Number(item.item_id.slice(3))].b)
    expect(Math.sqrt(errors.reduce((s, e) => s + e * e, 0) / errors.length)).toBeLessThan(0.25) // 400 people only
    for (const item of items) {
      expect(item.origin).toBe('calibrated')
      const fit = JSON.parse(item.fit_json)
      expect(fit).toMatchObject({ model: '2pl', status: 'converged' })
      expect(fit.fit.infit).toBeGreaterThan(0.5)
      expect(fit.se.b).toBeGreaterThan(0)
    }
    // imported sql items were anchors, left untouched
    expect((db.prepare("SELECT COUNT(*) AS n FROM items WHERE skill_id = 'sql' AND origin = 'import'").get() as { n: number }).n).toBe(12)
    const python = db.prepare("SELECT * FROM coverage WHERE skill_id = 'python'").get() as Record<string, number>
    expect(python['assessed']).toBe(300)
  })

  it('reports items that cannot be calibrated and marks the run partial', () => {
    const { db, config } = setup()
    seed(db, { people: 40 })
    // python has 40 responses per item, sql anchors; require 50 responses for calibration
    const strict = parseConfig({ ability: { calibration: { minResponses: 50 } } })
    const logs: string[] = []
    const result = runAbility(db, strict, { calibrate: true, now: NOW, log: (m) => logs.push(m) })
    expect(result.status).toBe('partial')
    expect(result.counts.calibrationProblems).toBe(10)
    expect(logs.join('\n')).toMatch(/item py-0: too-few-responses \(only 40 responses \(minimum 50\)\)/)
    const item = db.prepare("SELECT a, b, fit_json FROM items WHERE item_id = 'py-0'").get() as { a: number | null; b: number | null; fit_json: string }
    expect(item.a).toBeNull()
    expect(JSON.parse(item.fit_json).status).toBe('too-few-responses')
    void config
  })

  it('MLE method: perfect patterns fall back to EAP and the note says so', () => {
    const { db } = setup()
    seed(db)
    upsertResponses(db, Array.from({ length: 12 }, (_, j) => ({ person_id: 'fh-perfect', item_id: `sql-${j}`, response: 1, taken_at: '2025-10-01' })))
    runAbility(db, parseConfig({ ability: { method: 'mle' } }), { now: NOW })
    const row = db.prepare("SELECT method, note FROM abilities WHERE person_id = 'fh-perfect'").get() as { method: string; note: string }
    expect(row).toEqual({ method: 'eap', note: expect.stringMatching(/all responses correct: no finite maximum-likelihood estimate, EAP used/) })
    const others = db.prepare("SELECT COUNT(*) AS n FROM abilities WHERE origin = 'estimate' AND method = 'mle'").get() as { n: number }
    expect(others.n).toBeGreaterThan(300)
  })

  it('names an item whose stored parameters cannot be used and ignores its responses', () => {
    const { db, config } = setup()
    seed(db, { people: 30 })
    db.prepare("UPDATE items SET a = 0 WHERE item_id = 'sql-3'").run() // as if written by another tool
    const logs: string[] = []
    const result = runAbility(db, config, { now: NOW, log: (m) => logs.push(m) })
    expect(logs.join('\n')).toMatch(/item sql-3: parameters a = 0, b = .* are not usable/)
    expect(result.counts.itemsWithoutParameters).toBe(11)
    expect(result.counts.estimated).toBe(27)
  })

  it('the Stage wrapper passes --calibrate and rejects a bad now option', async () => {
    const { db, config } = setup()
    seed(db, { people: 60 })
    const result = await abilityStage.run({ db, config, log: () => {}, trigger: 'manual', options: { calibrate: true, now: '2026-01-15' } })
    expect(result.counts.calibrated).toBe(10)
    await expect(abilityStage.run({ db, config, log: () => {}, trigger: 'manual', options: { now: 'soon' } })).rejects.toThrow(/option now is not a date/)
  })
})

describe('coverage report', () => {
  it('per-role rows and exact per-skill totals; small groups suppressed with complementary suppression', () => {
    const { db, config } = setup()
    seed(db)
    runAbility(db, config, { now: NOW })
    const out = coverageReport(db, config, { now: NOW })
    const rows = out.json as Array<Record<string, unknown>>
    const sql = rows.filter((r) => r['skillId'] === 'sql')
    expect(sql.map((r) => r['role'])).toEqual(['*', 'analyst', 'archivist', 'data-steward'])
    const [total, analyst, archivist, steward] = sql
    expect(total['headcount']).toBe(401)
    expect(total['requiredTheta']).toBeNull() // roles require different levels
    // the archivist role has one person: suppressed, and one more role hidden so the total cannot give it back
    expect(archivist).toMatchObject({ headcount: 1, coverage: null, expectedGap: null, suppressed: 'small-group' })
    expect([analyst['suppressed'], steward['suppressed']]).toContain('complementary')
    expect(total['suppressed']).toBeNull()
    const gap = total['expectedGap'] as number
    const interval = total['gapInterval'] as [number, number]
    expect(Math.abs(gap - 401 * (1 - (total['coverage'] as number)))).toBeLessThan(0.05) // coverage is printed to 4 decimals
    expect(interval[0]).toBeLessThanOrEqual(gap)
    expect(interval[1]).toBeGreaterThanOrEqual(gap)
    // python: nobody assessed, coverage unknown, interval [0, headcount]
    const python = rows.find((r) => r['skillId'] === 'python' && r['role'] === '*')!
    expect(python).toMatchObject({ assessed: 0, unknown: 300 })
    expect(out.footer).toMatch(/suppressed/)
    expect(out.columns).toContain('gap_high_assessed')
  })

  it('person-level rows only with the people option', () => {
    const { db, config } = setup()
    seed(db)
    runAbility(db, config, { now: NOW })
    const out = coverageReport(db, config, { people: true, now: NOW })
    const people = out.json as Array<Record<string, unknown>>
    expect(people.find((p) => p['personId'] === 'fh-0009' && p['skillId'] === 'sql')).toMatchObject({ stale: true, origin: 'import', se: 0.45, seReported: 0.3 })
    expect(people.find((p) => p['personId'] === 'fh-0001' && p['skillId'] === 'python')).toMatchObject({ theta: null, origin: null, pMeet: null })
    expect(out.columns).toContain('p_meet')
  })
})

describe('CLI: tides run ability, tides report coverage', () => {
  async function tides(...args: string[]) {
    let out = ''
    let err = ''
    const io: Io = { out: (t) => (out += t), err: (t) => (err += t), isTty: false }
    const code = await main(args, io)
    return { code, out, err }
  }

  it('imports CSVs, runs the stage with --calibrate and prints coverage as JSON and CSV', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-ability-'))
    const db = path.join(dir, 't.db')
    const rng = mulberry32(77)
    const items = Array.from({ length: 8 }, (_, j) => makeItem('2pl', { a: 1.1, b: -1 + j * 0.3 }))
    const write = (name: string, text: string) => {
      fs.writeFileSync(path.join(dir, name), text)
      return path.join(dir, name)
    }
    const itemsCsv = write('items.csv', 'item_id,skill_id,a,b,c\n' + items.map((_, j) => `q${j},bookkeeping,,,`).join('\n') + '\n')
    const peopleCsv = write('people.csv', 'person_id,role,team\n' + Array.from({ length: 120 }, (_, i) => `p${i},clerk,mill`).join('\n') + '\n')
    const rolesCsv = write('roles.csv', 'role,skill_id,required_theta\nclerk,bookkeeping,0.2\n')
    const lines = ['person_id,item_id,response,taken_at']
    for (let i = 0; i < 100; i++) {
      const theta = normalDraw(rng)
      items.forEach((item, j) => lines.push(`p${i},q${j},${rng() < probability(theta, item) ? 1 : 0},2025-11-0${1 + (i % 9)}`))
    }
    const responsesCsv = write('responses.csv', lines.join('\n') + '\n')
    for (const [kind, file] of [['items', itemsCsv], ['people', peopleCsv], ['roles', rolesCsv], ['responses', responsesCsv]] as const) {
      expect((await tides('--db', db, 'import', kind, file)).code).toBe(0)
    }
    const run = await tides('--db', db, 'run', 'ability', '--calibrate', '--only')
    expect(run.code).toBe(0)
    expect(run.err).toMatch(/8 items calibrated; 100 abilities estimated in 1 skills/)
    const json = await tides('--db', db, 'report', 'coverage', '--json')
    expect(json.code).toBe(0)
    const rows = JSON.parse(json.out) as Array<Record<string, unknown>>
    expect(rows.find((r) => r['role'] === 'clerk')).toMatchObject({ headcount: 120, assessed: 100, unknown: 20, suppressed: null })
    const csv = await tides('--db', db, 'report', 'coverage', '--csv')
    expect(csv.out.split('\r\n')[0]).toBe(
      'skill_id,label,role,required_theta,headcount,assessed,unknown,stale,coverage,expected_meeting,expected_gap,gap_low,gap_high,expected_gap_assessed,gap_low_assessed,gap_high_assessed,suppressed',
    )
    const people = await tides('--db', db, 'report', 'coverage', '--json', '--people')
    expect((JSON.parse(people.out) as unknown[]).length).toBe(120)
    fs.rmSync(dir, { recursive: true, force: true })
  })
})
