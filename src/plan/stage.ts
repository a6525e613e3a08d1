/**
 * @module plan/stage
 * The `plan` stage: runs after `curves.fitted` and `ability.updated`, computes every planning output
 * (compute.ts) and, in one transaction, replaces the plan_outputs rows, records how course skills
 * resolved, audits newly raised course flags, and emits `course.flagged` for each new flag and one
 * `plan.updated`.
 */
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import * as store from '../db/plan.ts'
import { emit } from '../events/outbox.ts'
import type { Stage, StageResult } from '../stage.ts'
import { computePlan, type PlanResult } from './compute.ts'
import type { CourseFlag } from './course-flags.ts'

/** The kinds of plan_outputs rows this stage owns. */
export const PLAN_KINDS = ['need', 'need-role', 'role-suggestion', 'course-flag', 'pathway', 'candidates', 'reskilling', 'plan-run'] as const
export type PlanKind = (typeof PLAN_KINDS)[number]

/** Keys of composite rows: a JSON array, so no separator can collide with a name. */
export function compositeKey(...parts: (string | number)[]): string {
  return JSON.stringify(parts)
}

export interface PlanRunSummary {
  result: PlanResult
  newFlags: { courseId: string; flag: CourseFlag['flag']; previous: string | null }[]
}

/**
 * Computes and stores the plan in one transaction, emitting its events there.
 * @example const { result } = runPlan(db, config); result.needs[0]?.id
 */
export function runPlan(db: Db, config: Config, now: Date = new Date()): PlanRunSummary {
  const tx = db.transaction((): PlanRunSummary => {
    const result = computePlan(db, config, now)
    const at = now.toISOString()
    const previous = new Map(store.readPlanOutputs<CourseFlag>(db, 'course-flag').map((r) => [r.key, r.payload.flag]))

    store.writeKeptCourseResolutions(db, result.courseResolutionKey.inputs, result.courseResolutionKey.method, result.courseSkills)
    for (const c of result.courseSkills) {
      for (const r of c.resolved) store.setCourseSkillId(db, c.courseId, r.ref, r.skillId)
      if (c.untagged) {
        store.deleteInferredCourseSkills(db, c.courseId, c.inferred.map((i) => i.ref))
        for (const i of c.inferred) store.upsertInferredCourseSkill(db, c.courseId, i.ref, i.skillId)
      }
    }

    const rows: store.PlanOutputInput[] = [
      ...result.needs.map((n) => ({ kind: 'need', key: n.id, rank: n.rank, score: n.score, payload: n })),
      ...result.roleNeeds.map((n) => ({ kind: 'need-role', key: compositeKey(n.role, n.id), rank: n.rank, score: n.score, payload: n })),
      ...result.suggestions.map((s) => ({ kind: 'role-suggestion', key: compositeKey(s.role, s.skillId), rank: null, score: s.recentShare - (s.earlierShare ?? 0), payload: s })),
      ...result.courseFlags.map((f) => ({ kind: 'course-flag', key: f.courseId, rank: null, score: f.decliningFraction, payload: f })),
      ...result.pathways.map((p) => ({ kind: 'pathway', key: p.skillId, rank: null, score: p.targets[0]?.score ?? null, payload: p })),
      ...result.candidates.map((g) => ({ kind: 'candidates', key: compositeKey(g.role, g.decliningSkill), rank: null, score: g.candidates, payload: g })),
      ...result.forecast.map((q) => ({ kind: 'reskilling', key: compositeKey(q.skillId, q.quarter), rank: q.quarter, score: q.reskill, payload: q })),
      { kind: 'plan-run', key: 'latest', rank: null, score: null, payload: { baseMonth: result.baseMonth, assumptions: result.assumptions } },
    ]
    store.replacePlanOutputs(db, PLAN_KINDS, rows, at)

    const newFlags: PlanRunSummary['newFlags'] = []
    for (const f of result.courseFlags) {
      const before = previous.get(f.courseId) ?? null
      if (f.flag === 'keep' || f.flag === before) continue
      newFlags.push({ courseId: f.courseId, flag: f.flag, previous: before })
      store.insertFlagNote(db, { course_id: f.courseId, action: 'flagged', flag: f.flag, note: f.reasons.join(' '), actor: 'plan', until: null }, at)
      emit(db, 'course.flagged', { courseId: f.courseId, title: f.title, owner: f.owner, flag: f.flag, previous: before, reasons: f.reasons, add: f.add.map((a) => a.id) })
    }
    emit(db, 'plan.updated', {
      baseMonth: result.baseMonth,
      needs: result.needs.length,
      evidenced: result.needs.filter((n) => n.evidenced).length,
      top: result.needs.slice(0, 5).map((n) => n.id),
      courses: result.courseFlags.length,
      retire: result.courseFlags.filter((f) => f.flag === 'retire').length,
      refresh: result.courseFlags.filter((f) => f.flag === 'refresh').length,
      newFlags: newFlags.length,
      pathways: result.pathways.length,
      forecastSkills: new Set(result.forecast.map((q) => q.skillId)).size,
    })
    return { result, newFlags }
  })
  return tx.immediate()
}

export const planStage: Stage = {
  name: 'plan',
  description: 'needs ranking, course flags, reskilling pathways and forecast',
  subscribesTo: ['curves.fitted', 'ability.updated'],
  async run(ctx): Promise<StageResult> {
    const { result, newFlags } = runPlan(ctx.db, ctx.config)
    const counts = {
      needs: result.needs.length,
      evidenced: result.needs.filter((n) => n.evidenced).length,
      suggestions: result.suggestions.length,
      courses: result.courseFlags.length,
      retire: result.courseFlags.filter((f) => f.flag === 'retire').length,
      refresh: result.courseFlags.filter((f) => f.flag === 'refresh').length,
      newFlags: newFlags.length,
      pathways: result.pathways.length,
      candidateGroups: result.candidates.length,
      forecastRows: result.forecast.length,
    }
    ctx.log(`plan: ${counts.needs} skills scored (${counts.evidenced} with demand evidence), ${counts.courses} courses flagged`)
    return {
      summary: `${counts.needs} needs ranked, ${counts.retire} courses to retire and ${counts.refresh} to refresh (${counts.newFlags} new), ${counts.pathways} pathways, ${new Set(result.forecast.map((q) => q.skillId)).size} skills forecast`,
      counts,
    }
  },
}
