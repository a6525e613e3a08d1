import { describe, it, expect } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { main } from '../../src/cli.ts'
import { REPORTS } from '../../src/commands/registry.ts'
import { contentHash, openDb } from '../../src/db/connection.ts'
import { readFlagNotes, readPlanOutputs, readCourseSkills, replacePlanOutputs } from '../../src/db/plan.ts'
import { bumpTaxonomyVersion } from '../../src/db/taxonomy.ts'
import { upsertCourses } from '../../src/db/workforce.ts'
import { emit } from '../../src/events/outbox.ts'
import { ripple, runPipeline } from '../../src/pipeline.ts'
import type { CourseFlag } from '../../src/plan/course-flags.ts'
import { SnoozeError, activeSnoozes, snoozeCourseFlag, unsnoozeCourseFlag } from '../../src/plan/snooze.ts'
import { runPlan } from '../../src/plan/stage.ts'
import { toCsv } from '../../src/util/csv.ts'
import { freshDb, testConfig } from './fixtures.ts'
import { loadScenario } from './scenario.ts'

function events(db: ReturnType<typeof freshDb>, type: string): Record<string, unknown>[] {
  return (db.prepare('SELECT payload_json FROM events WHERE type = ? ORDER BY id').all(type) as { payload_json: string }[]).map((r) => JSON.parse(r.payload_json) as Record<string, unknown>)
}

function flags(db: ReturnType<typeof freshDb>): Record<string, string> {
  return Object.fromEntries(readPlanOutputs<CourseFlag>(db, 'course-flag').map((r) => [r.key, r.payload.flag]))
}

describe('plan stage on a small synthetic organisation', () => {
  it('ranks, flags, finds pathways and forecasts, in one transaction with its events', () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    const { result, newFlags } = runPlan(db, config, new Date('2026-01-10T00:00:00Z'))

    const needs = readPlanOutputs<{ id: string; evidenced: boolean }>(db, 'need')
    expect(needs[0]!.key).toBe('prompt-engineering')
    expect(needs[0]!.rank).toBe(1)
    expect(needs.at(-1)!.key).toBe('cobol')
    expect(needs.at(-1)!.payload.evidenced).toBe(false)

    expect(flags(db)).toEqual({ 'c-flash': 'retire', 'c-jquery': 'refresh', 'c-python': 'keep', 'c-perl': 'keep', 'c-untagged': 'refresh', 'c-unknown': 'keep' })
    expect(newFlags.map((f) => f.courseId).sort()).toEqual(['c-flash', 'c-jquery', 'c-untagged'])
    expect(events(db, 'course.flagged').map((e) => [e['courseId'], e['flag']])).toEqual(expect.arrayContaining([['c-flash', 'retire'], ['c-jquery', 'refresh'], ['c-untagged', 'refresh']]))
    expect(events(db, 'plan.updated')).toHaveLength(1)
    expect(readFlagNotes(db).filter((n) => n.action === 'flagged').map((n) => n.course_id).sort()).toEqual(['c-flash', 'c-jquery', 'c-untagged'])

    expect(result.pathways.map((p) => [p.skillId, p.targets.map((t) => t.id)])).toEqual([['adobe-flash', ['html5-canvas']], ['jquery', ['typescript']]])
    const web = readPlanOutputs<{ strong: number; candidates: number }>(db, 'candidates')
    expect(web.map((r) => r.key)).toEqual([JSON.stringify(['Web Developer', 'jquery'])])
    // all ten web developers are strong in jQuery; w5 and w6 meet TypeScript's 0.5; w9 and w10 are unassessed in it
    expect(web[0]!.payload).toMatchObject({ strong: 10, candidates: 8 })

    const forecast = readPlanOutputs<{ skillId: string; quarter: number }>(db, 'reskilling')
    expect(new Set(forecast.map((r) => r.payload.skillId))).toEqual(new Set(['prompt-engineering', 'typescript']))
    expect(forecast.filter((r) => r.payload.skillId === 'typescript')).toHaveLength(8)
  })

  it('resolves course skills: tags by id or label, unknown tags as null, untagged courses from the title', () => {
    const db = freshDb()
    loadScenario(db)
    runPlan(db, testConfig())
    const rows = readCourseSkills(db)
    const of = (c: string) => rows.filter((r) => r.course_id === c).map((r) => [r.skill_ref, r.skill_id, r.inferred])
    expect(of('c-flash')).toEqual([['Adobe Flash', 'adobe-flash', 0]])
    expect(of('c-jquery')).toEqual([['HTML', 'html', 0], ['jquery', 'jquery', 0]])
    expect(of('c-unknown')).toEqual([['no-such-skill', null, 0]])
    expect(of('c-untagged')).toEqual([['jQuery', 'jquery', 1]])
    const run = readPlanOutputs<{ assumptions: { courseSkillMapping: string } }>(db, 'plan-run')[0]!.payload
    expect(run.assumptions.courseSkillMapping).toMatch(/by the taxonomy matcher$/)
    // a second run keeps exactly one inferred row
    runPlan(db, testConfig())
    expect(readCourseSkills(db).filter((r) => r.course_id === 'c-untagged')).toHaveLength(1)
  })

  it('keeps the course resolutions while titles, tags and the taxonomy are unchanged, and resolves again when one changes', () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    runPlan(db, config)
    const before = contentHash(db, ['plan_outputs', 'course_skills'])
    const of = (c: string) => readCourseSkills(db).filter((r) => r.course_id === c).map((r) => [r.skill_ref, r.skill_id, r.inferred])
    // the labels gone without the taxonomy version moving on: a run that resolved again would lose
    // the tags given by label ('Adobe Flash', 'HTML'); the kept resolutions still have them
    db.prepare('DELETE FROM labels').run()
    runPlan(db, config)
    expect(contentHash(db, ['plan_outputs', 'course_skills'])).toBe(before)
    // a changed title resolves again (and meets the labels' loss)
    db.prepare("UPDATE courses SET title = 'From jQuery to modern pages, again' WHERE course_id = 'c-untagged'").run()
    runPlan(db, config)
    expect(of('c-flash')).toEqual([['Adobe Flash', null, 0]])
    expect(flags(db)['c-flash']).toBe('keep')
    // so does a changed tag: the label back, kept until then
    const html = () => of('c-jquery').find((r) => r[0] === 'HTML')![1]
    db.prepare("INSERT INTO labels (concept_id, label, kind, case_sensitive) VALUES ('html', 'HTML', 'pref', 0)").run()
    runPlan(db, config)
    expect(html()).toBeNull()
    upsertCourses(db, [{ course_id: 'c-flash', title: 'Animations in Flash', skills: ['Adobe Flash', 'adobe-flash'], last_reviewed: null, enrollments_12m: 12, enrollments_prev_12m: 40, owner: '' }])
    runPlan(db, config)
    expect(html()).toBe('html')
    expect(of('c-flash')).toEqual([['Adobe Flash', null, 0], ['adobe-flash', 'adobe-flash', 0]])
    // and a new taxonomy version: the label gone again, kept until then
    db.prepare("DELETE FROM labels WHERE label = 'HTML'").run()
    runPlan(db, config)
    expect(html()).toBe('html')
    bumpTaxonomyVersion(db)
    runPlan(db, config)
    expect(html()).toBeNull()
  })

  it('builds the taxonomy matcher only when a course is untagged', () => {
    const db = freshDb()
    loadScenario(db)
    db.prepare("DELETE FROM course_skills WHERE course_id = 'c-untagged'").run()
    db.prepare("DELETE FROM courses WHERE course_id = 'c-untagged'").run()
    runPlan(db, testConfig())
    const run = readPlanOutputs<{ assumptions: { courseSkillMapping: string } }>(db, 'plan-run')[0]!.payload
    expect(run.assumptions.courseSkillMapping).toMatch(/by the taxonomy matcher \(not built: no untagged course\)$/)
    expect(flags(db)).toEqual({ 'c-flash': 'retire', 'c-jquery': 'refresh', 'c-python': 'keep', 'c-perl': 'keep', 'c-unknown': 'keep' })
  })

  it('announces only new flags, and again when a flag changes back', () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    runPlan(db, config)
    const before = contentHash(db, ['plan_outputs'])
    const second = runPlan(db, config)
    expect(second.newFlags).toEqual([])
    expect(events(db, 'course.flagged')).toHaveLength(3)
    expect(events(db, 'plan.updated')).toHaveLength(2)
    // same inputs, same outputs (the seeded forecast included)
    expect(contentHash(db, ['plan_outputs'])).toBe(before)

    db.prepare("UPDATE curves SET state = 'steady', half_life_months = NULL, annual_growth = 0 WHERE concept_id = 'jquery'").run()
    runPlan(db, config)
    expect(flags(db)['c-jquery']).toBe('keep')
    db.prepare("UPDATE curves SET state = 'declining', half_life_months = 36, annual_growth = -0.206 WHERE concept_id = 'jquery'").run()
    const back = runPlan(db, config)
    expect(back.newFlags).toContainEqual({ courseId: 'c-jquery', flag: 'refresh', previous: 'keep' })
  })

  it('writes nothing and announces nothing when the run fails part-way', () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    db.exec('DROP TABLE course_flag_notes')
    expect(() => runPlan(db, config)).toThrow(/course_flag_notes/)
    expect(readPlanOutputs(db, 'need')).toEqual([])
    expect(events(db, 'plan.updated')).toEqual([])
    expect(readCourseSkills(db).every((r) => r.skill_id === null)).toBe(true)
  })

  it('runs from the pipeline and from a curves.fitted event', async () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    const direct = await runPipeline(db, config, ['plan'])
    expect(direct[0]!.error).toBeUndefined()
    expect(direct[0]!.result!.counts['retire']).toBe(1)
    expect(direct[0]!.result!.counts['refresh']).toBe(2)
    db.transaction(() => emit(db, 'curves.fitted', { skills: 9 }))()
    const rippled = await ripple(db, config)
    expect(rippled.map((o) => [o.stage, o.trigger])).toEqual([['plan', 'event:curves.fitted']])
    const runs = db.prepare("SELECT status FROM job_runs WHERE stage = 'plan'").all() as { status: string }[]
    expect(runs.map((r) => r.status)).toEqual(['ok', 'ok'])
  })
})

describe('snoozing a course flag', () => {
  // the courses report reads snoozes against the real clock, so the dates are relative to it
  const now = new Date()
  const day = (offset: number) => new Date(Date.UTC(now.getUTCFullYear(), now.getUTCMonth(), now.getUTCDate() + offset)).toISOString().slice(0, 10)
  const until = day(90)
  const untilIso = `${until}T00:00:00.000Z`
  function planned() {
    const db = freshDb()
    loadScenario(db)
    runPlan(db, testConfig(), now)
    return db
  }

  it('stores the snooze with its note, audited, and the courses report shows it', () => {
    const db = planned()
    const note = snoozeCourseFlag(db, 'c-flash', 'replacement course starts in spring', until, 'owner@fernhollow.example', now)
    expect(note).toMatchObject({ course_id: 'c-flash', action: 'snooze', flag: 'retire', note: 'replacement course starts in spring', actor: 'owner@fernhollow.example', until: untilIso })
    const active = activeSnoozes(db, new Map([['c-flash', 'retire']]), now)
    expect(active.get('c-flash')?.until).toBe(untilIso)
    // expired after the date, and void once the flag changes
    expect(activeSnoozes(db, new Map([['c-flash', 'retire']]), new Date(Date.parse(untilIso) + 86_400_000)).size).toBe(0)
    expect(activeSnoozes(db, new Map([['c-flash', 'refresh']]), now).size).toBe(0)
    const rows = REPORTS['courses']!.build(db, testConfig(), {}).rows
    expect(rows.find((r) => r['course'] === 'c-flash')!['snoozedUntil']).toBe(untilIso)
    unsnoozeCourseFlag(db, 'c-flash', 'launch slipped; review now', 'owner@fernhollow.example', now)
    expect(activeSnoozes(db, new Map([['c-flash', 'retire']]), now).size).toBe(0)
    expect(readFlagNotes(db, 'c-flash').map((n) => n.action)).toEqual(['flagged', 'snooze', 'unsnooze'])
  })

  it('refuses bad requests with a reason', () => {
    const db = planned()
    const bad: [string, string, string, string, RegExp][] = [
      ['nope', 'x', until, 'me', /unknown course "nope"/],
      ['c-python', 'x', until, 'me', /flagged keep/],
      ['c-flash', '  ', until, 'me', /note/],
      ['c-flash', 'x', until, '', /actor/],
      ['c-flash', 'x', '01/04/2099', 'me', /ISO 8601/],
      ['c-flash', 'x', '2099-02-30', 'me', /not a real date/],
      ['c-flash', 'x', '2099-13-01', 'me', /not a real date/],
      ['c-flash', 'x', day(-1), 'me', /not in the future/],
    ]
    for (const [course, note, until, actor, message] of bad) {
      expect(() => snoozeCourseFlag(db, course, note, until, actor, now)).toThrow(SnoozeError)
      expect(() => snoozeCourseFlag(db, course, note, until, actor, now)).toThrow(message)
    }
    expect(readFlagNotes(db).filter((n) => n.action === 'snooze')).toEqual([])
    const fresh = freshDb()
    loadScenario(fresh)
    expect(() => snoozeCourseFlag(fresh, 'c-flash', 'x', until, 'me', now)).toThrow(/run the plan stage first/)
    // a leap day is a real date
    expect(snoozeCourseFlag(db, 'c-flash', 'x', '2096-02-29', 'me', now).until).toBe('2096-02-29T00:00:00.000Z')
  })
})

describe('plan reports', () => {
  it('needs --json is a ranked array with the score and its parts; --csv has the same rows', () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    expect(REPORTS['needs']!.build(db, config, {}).footer).toMatch(/tides run plan/)
    runPlan(db, config)
    const out = REPORTS['needs']!.build(db, config, {})
    const json = out.json as { rank: number; id: string; label: string; score: number; parts: Record<string, { value: number | null; weight: number; contribution: number }> }[]
    expect(json[0]).toMatchObject({ rank: 1, id: 'prompt-engineering', label: 'prompt engineering' })
    for (const n of json) {
      const sum = Object.values(n.parts).reduce((s, p) => s + p.contribution, 0)
      expect(n.score).toBeCloseTo(sum, 12)
      expect(Object.keys(n.parts).sort()).toEqual(['exposure', 'gap', 'internalPull', 'momentum'])
    }
    const csv = toCsv(out.rows, out.columns).trim().split('\r\n')
    expect(csv[0]).toBe(out.columns.join(','))
    expect(csv).toHaveLength(json.length + 1)
    expect(REPORTS['needs']!.build(db, config, { limit: 3 }).rows).toHaveLength(3)
    // the table's adjusted p keeps three significant digits (rounded to five decimals, 4.76e-23 printed as 0)
    const [first] = readPlanOutputs<{ parts: { momentum: { inputs: Record<string, unknown> } } }>(db, 'need')
    first!.payload.parts.momentum.inputs['pAdjusted'] = 4.764141940892603e-23
    replacePlanOutputs(db, ['need'], [{ kind: 'need', key: first!.key, rank: first!.rank, score: first!.score, payload: first!.payload }], '2026-01-01T00:00:00Z')
    expect(REPORTS['needs']!.build(db, config, {}).rows[0]).toMatchObject({ pAdjusted: 4.76e-23 })
  })

  it('reskilling candidates are counts unless --people is given', () => {
    const db = freshDb()
    loadScenario(db)
    const config = testConfig()
    runPlan(db, config)
    const plain = REPORTS['reskilling-candidates']!.build(db, config, {})
    expect(plain.columns).not.toContain('people')
    expect(JSON.stringify(plain.json)).not.toMatch(/"w1"/)
    const reskill = REPORTS['reskilling']!.build(db, config, {})
    expect(JSON.stringify(reskill.json)).not.toMatch(/"w1"/)
    expect((reskill.json as { baseMonth: string }).baseMonth).toBe('2025-12')
    const named = REPORTS['reskilling-candidates']!.build(db, config, { people: true })
    expect(named.rows[0]!['people']).toMatch(/w1/)
    for (const name of ['needs-by-role', 'suggested-requirements', 'courses', 'pathways']) {
      const r = REPORTS[name]!.build(db, config, {})
      expect(() => toCsv(r.rows, r.columns)).not.toThrow()
    }
    expect(REPORTS['pathways']!.build(db, config, {}).rows.map((r) => [r['from'], r['to']])).toEqual([['adobe-flash', 'html5-canvas'], ['jquery', 'typescript']])
    // p-values keep three significant digits (rounded to five decimals, 3e-15 printed as 0)
    const suggestion = { role: 'Analyst', skillId: 'sql', label: 'SQL', recentPostings: 900, recentMentions: 300, recentShare: 1 / 3, earlierPostings: 800, earlierMentions: 80, earlierShare: 0.1, pValue: 3.00750229955946e-15, pAdjusted: 0.0123456, state: 'rising', reason: '' }
    replacePlanOutputs(db, ['role-suggestion'], [{ kind: 'role-suggestion', key: '["Analyst","sql"]', rank: null, score: 0.23, payload: suggestion }], '2026-01-01T00:00:00Z')
    expect(REPORTS['suggested-requirements']!.build(db, config, {}).rows[0]).toMatchObject({ pValue: 3.01e-15, pAdjusted: 0.0123, recentShare: 0.3333 })
  })

  it('through the CLI: run plan, then report needs --json parses and report courses --csv prints rows', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-plan-'))
    try {
      const file = path.join(dir, 't.db')
      const db = openDb(file)
      loadScenario(db)
      db.close()
      const out: string[] = []
      const err: string[] = []
      const io = { out: (t: string) => void out.push(t), err: (t: string) => void err.push(t), isTty: false }
      expect(await main(['--db', file, 'run', 'plan'], io)).toBe(0)
      out.length = 0
      expect(await main(['--db', file, 'report', 'needs', '--json'], io)).toBe(0)
      const parsed = JSON.parse(out.join('')) as { rank: number; id: string }[]
      expect(parsed[0]).toMatchObject({ rank: 1, id: 'prompt-engineering' })
      out.length = 0
      expect(await main(['--db', file, 'report', 'courses', '--csv'], io)).toBe(0)
      const lines = out.join('').trim().split('\r\n')
      expect(lines[0]!.startsWith('course,title,owner,flag')).toBe(true)
      expect(lines).toHaveLength(7)
      expect(lines[1]).toMatch(/^c-flash,/)
    } finally {
      fs.rmSync(dir, { recursive: true, force: true })
    }
  })
})
