/**
 * The plan stage on the demo scenario (Fernhollow Cooperative, smaller than the default): the
 * planted skills of src/demo/planted.ts must come out where the issue says. Runs the whole pipeline
 * through runDemo, so it needs the map, fit and ability stages.
 */
import { describe, it, expect } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { parseConfig } from '../../src/config.ts'
import { openDb } from '../../src/db/connection.ts'
import { readCoverage, readCourseSkills, readPlanOutputs } from '../../src/db/plan.ts'
import { readTitleMonths } from '../../src/db/title-months.ts'
import { referenceTitleRows, titleRows } from '../db/title-counts-reference.ts'
import { runPlan } from '../../src/plan/stage.ts'
import { runDemo } from '../../src/demo/load.ts'
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'
import type { CourseFlag } from '../../src/plan/course-flags.ts'
import type { RankedNeed } from '../../src/plan/needs.ts'
import { findStage } from '../../src/stages.ts'

const READY = ['ingest', 'map', 'fit', 'ability', 'plan'].every((name) => findStage(name) !== undefined)

describe.skipIf(!READY)('plan on the demo scenario', () => {
  it('ranks low-coverage emerging skills in the top 10, retires fading skills’ courses, keeps steady ones', async () => {
    const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-plan-demo-'))
    try {
      const config = parseConfig({ dataDir, db: path.join(dataDir, 'tides.db') })
      const db = openDb(config.db)
      await runDemo(db, config, { seed: 7, months: 36, perMonth: 400, people: 800, asOf: '2025-06-15', run: true, log: () => {} })

      const needs = readPlanOutputs<RankedNeed>(db, 'need').map((r) => r.payload)
      const rank = new Map(needs.map((n) => [n.id, n.rank]))
      // coverage per skill over the roles requiring it: expected meeting among the assessed
      const cover = new Map<string, { meeting: number; assessed: number }>()
      for (const c of readCoverage(db)) {
        const x = cover.get(c.skill_id) ?? { meeting: 0, assessed: 0 }
        x.meeting += c.expected_meeting
        x.assessed += c.assessed
        cover.set(c.skill_id, x)
      }
      const lowCoverage = (id: string) => {
        const x = cover.get(id)
        return x !== undefined && x.assessed > 0 && x.meeting / x.assessed < 0.5
      }
      // at this smaller volume the latest-starting planted skills can still lack demand evidence; those
      // are listed after every evidenced skill by design, so the check covers the evidenced ones
      const evidenced = new Set(needs.filter((n) => n.evidenced).map((n) => n.id))
      const emergingLow = PLANTED_SKILLS.filter((s) => s.expectedState === 'emerging' && lowCoverage(s.id) && evidenced.has(s.id)).map((s) => s.id)
      expect(emergingLow).toContain('prompt-engineering')
      for (const id of emergingLow) expect(rank.get(id), `${id} rank`).toBeLessThanOrEqual(10)

      const flags = new Map(readPlanOutputs<CourseFlag>(db, 'course-flag').map((r) => [r.key, r.payload]))
      const skillsOf = new Map<string, string[]>()
      for (const r of readCourseSkills(db)) if (r.skill_id) skillsOf.set(r.course_id, [...(skillsOf.get(r.course_id) ?? []), r.skill_id])
      const fading = new Set(PLANTED_SKILLS.filter((s) => s.expectedState === 'fading').map((s) => s.id))
      const steady = new Set(PLANTED_SKILLS.filter((s) => s.expectedState === 'steady').map((s) => s.id))
      const fadingCourses = [...skillsOf].filter(([, ids]) => ids.some((id) => fading.has(id))).map(([c]) => c)
      const steadyCourses = [...skillsOf].filter(([, ids]) => ids.every((id) => steady.has(id))).map(([c]) => c)
      expect(fadingCourses.length).toBeGreaterThan(0)
      expect(steadyCourses.length).toBeGreaterThan(0)
      for (const c of fadingCourses) expect(flags.get(c)?.flag, `${c} ${flags.get(c)?.title}: ${flags.get(c)?.reasons.join(' ')}`).toBe('retire')
      for (const c of steadyCourses) expect(flags.get(c)?.flag, `${c} ${flags.get(c)?.title}: ${flags.get(c)?.reasons.join(' ')}`).toBe('keep')

      // role suggestions: the kept counts per month, title and occupation equal those counted from
      // the postings, and a plan that recomputes them from nothing suggests the same
      const suggestions = () => readPlanOutputs(db, 'role-suggestion').map((r) => [r.key, r.payload])
      const kept = suggestions()
      expect(kept.length).toBeGreaterThan(0)
      const counted = readTitleMonths(db, null)
      const months = [...new Set(counted.rows.map((t) => t.month))]
      // the two 12-month windows of the suggestions, and no other month
      expect(months).toHaveLength(2 * config.plan.suggestions.recentMonths)
      expect(titleRows(counted)).toEqual(referenceTitleRows(db, months[0]!))
      db.exec('DELETE FROM title_months; DELETE FROM title_month_marks')
      runPlan(db, config, new Date('2025-06-15T12:00:00Z'))
      expect(suggestions()).toEqual(kept)
      db.close()
    } finally {
      fs.rmSync(dataDir, { recursive: true, force: true })
    }
  }, 900_000)
})
