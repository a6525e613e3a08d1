/**
 * @module plan/reports
 * The plan's reports for `tides report` (text table, --json, --csv): needs, needs-by-role,
 * suggested-requirements, courses, pathways, reskilling and reskilling-candidates. They read the
 * stored plan_outputs; person-level rows only with `--people`.
 */
import type { Report, ReportOutput } from '../commands/registry.ts'
import type { Db } from '../db/connection.ts'
import { readPlanOutputs } from '../db/plan.ts'
import type { RoleNeed } from './compute.ts'
import type { CourseFlag } from './course-flags.ts'
import type { RankedNeed } from './needs.ts'
import type { CandidateGroup, Pathway } from './pathways.ts'
import type { QuarterForecast } from './reskilling-forecast.ts'
import type { RoleSuggestion } from './role-suggestions.ts'
import { activeSnoozes, type SnoozeState } from './snooze.ts'

function round(x: number | null | undefined, digits = 4): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null
  const f = 10 ** digits
  return Math.round(x * f) / f
}

/** A p-value to three significant digits: rounded to decimals, a p of 3e-15 would print as 0. */
function pRound(p: number | null | undefined): number | null {
  if (p === null || p === undefined || !Number.isFinite(p)) return null
  return Number(p.toPrecision(3))
}

function notRunFooter(db: Db): string | undefined {
  return readPlanOutputs(db, 'plan-run').length === 0 ? 'the plan has not been computed yet: run `tides run plan`' : undefined
}

function limited<T>(rows: T[], limit: number | undefined): T[] {
  return limit === undefined ? rows : rows.slice(0, limit)
}

function needRow(n: RankedNeed): Record<string, unknown> {
  return {
    rank: n.rank,
    id: n.id,
    label: n.label,
    evidence: n.evidenced ? 'yes' : 'none',
    score: round(n.score),
    momentum: round(n.parts.momentum.value),
    gap: round(n.parts.gap.value),
    exposure: round(n.parts.exposure.value),
    internalPull: round(n.parts.internalPull.value),
    state: n.parts.momentum.inputs['state'] ?? '',
    latestShare: round(n.parts.momentum.inputs['latestShare'] as number | null, 5),
    baseShare: round((n.parts.momentum.inputs['baseShare'] as number | null | undefined) ?? null, 5),
    forecastShare12: round(n.parts.momentum.inputs['forecastShare12'] as number | null, 5),
    pAdjusted: pRound(n.parts.momentum.inputs['pAdjusted'] as number | null),
    gapPeople: round(n.parts.gap.inputs['expectedGap'] as number | null, 2),
    unknownPeople: n.parts.gap.inputs['unknown'] ?? null,
    exposedHeadcount: ((n.parts.exposure.inputs['requiredHeadcount'] as number) ?? 0) + ((n.parts.exposure.inputs['futureHeadcount'] as number) ?? 0),
    notes: n.notes.join('; '),
  }
}

const NEED_COLUMNS = ['rank', 'id', 'label', 'evidence', 'score', 'momentum', 'gap', 'exposure', 'internalPull', 'state', 'latestShare', 'baseShare', 'forecastShare12', 'pAdjusted', 'gapPeople', 'unknownPeople', 'exposedHeadcount', 'notes']

function needJson(n: RankedNeed): Record<string, unknown> {
  return { rank: n.rank, id: n.id, label: n.label, score: n.score, evidenced: n.evidenced, parts: n.parts, notes: n.notes }
}

function courseRows(db: Db): { flags: (CourseFlag & { snooze: SnoozeState | null })[] } {
  const flags = readPlanOutputs<CourseFlag>(db, 'course-flag').map((r) => r.payload)
  const snoozes = activeSnoozes(db, new Map(flags.map((f) => [f.courseId, f.flag])))
  const order = { retire: 0, refresh: 1, keep: 2 }
  return {
    flags: flags
      .map((f) => ({ ...f, snooze: snoozes.get(f.courseId) ?? null }))
      .sort((a, b) => order[a.flag] - order[b.flag] || (a.halving.months ?? Infinity) - (b.halving.months ?? Infinity) || (a.courseId < b.courseId ? -1 : 1)),
  }
}

export const PLAN_REPORTS: Record<string, Report> = {
  needs: {
    description: 'ranked training needs per skill: score and its parts (momentum, gap, exposure, internal pull)',
    build(db, _config, opts): ReportOutput {
      const needs = limited(readPlanOutputs<RankedNeed>(db, 'need').map((r) => r.payload), opts.limit)
      return { rows: needs.map(needRow), columns: NEED_COLUMNS, json: needs.map(needJson), footer: notRunFooter(db) }
    },
  },
  'needs-by-role': {
    description: 'ranked training needs per role and skill (required skills and suggested ones)',
    build(db, _config, opts): ReportOutput {
      const needs = limited(readPlanOutputs<RoleNeed>(db, 'need-role').map((r) => r.payload), opts.limit)
      needs.sort((a, b) => (a.role < b.role ? -1 : a.role > b.role ? 1 : a.rank - b.rank))
      return {
        rows: needs.map((n) => ({ role: n.role, required: n.required ? 'yes' : 'suggested', ...needRow(n) })),
        columns: ['role', 'required', ...NEED_COLUMNS],
        json: needs.map((n) => ({ role: n.role, required: n.required, ...needJson(n) })),
        footer: notRunFooter(db),
      }
    },
  },
  'suggested-requirements': {
    description: "skills a role's postings increasingly ask for that its requirements lack",
    build(db, _config, opts): ReportOutput {
      const rows = limited(readPlanOutputs<RoleSuggestion>(db, 'role-suggestion').map((r) => r.payload), opts.limit)
      return {
        rows: rows.map((s) => ({ role: s.role, id: s.skillId, label: s.label, recentShare: round(s.recentShare), earlierShare: round(s.earlierShare), recentPostings: s.recentPostings, pValue: pRound(s.pValue), pAdjusted: pRound(s.pAdjusted), state: s.state ?? '', reason: s.reason })),
        columns: ['role', 'id', 'label', 'recentShare', 'earlierShare', 'recentPostings', 'pValue', 'pAdjusted', 'state', 'reason'],
        json: rows,
        footer: notRunFooter(db),
      }
    },
  },
  courses: {
    description: 'course flags (retire, refresh, keep) with reasons, half-lives and snoozes',
    build(db, _config, opts): ReportOutput {
      const flags = limited(courseRows(db).flags, opts.limit)
      return {
        rows: flags.map((f) => ({
          course: f.courseId,
          title: f.title,
          owner: f.owner,
          flag: f.flag,
          snoozedUntil: f.snooze?.until ?? '',
          halvingMonths: round(f.halving.months, 1),
          halvingLow: round(f.halving.low, 1),
          halvingHigh: round(f.halving.high, 1),
          skills: f.skills.map((s) => `${s.label}${s.inferred ? ' (from title)' : ''}: ${s.state ?? 'no curve'}${s.halfLifeMonths !== null ? `, half-life ${Math.round(s.halfLifeMonths)} months` : ''}`).join('; '),
          add: f.add.map((a) => a.label).join('; '),
          reasons: f.reasons.join(' '),
        })),
        columns: ['course', 'title', 'owner', 'flag', 'snoozedUntil', 'halvingMonths', 'halvingLow', 'halvingHigh', 'skills', 'add', 'reasons'],
        json: flags,
        footer: notRunFooter(db),
      }
    },
  },
  pathways: {
    description: 'reskilling pathways: for each declining skill, the rising skills most adjacent in postings',
    build(db, _config, opts): ReportOutput {
      const paths = limited(readPlanOutputs<Pathway>(db, 'pathway').map((r) => r.payload), opts.limit)
      const rows = paths.flatMap((p) =>
        p.targets.map((t, i) => ({ from: p.skillId, fromLabel: p.label, fromState: p.state, halfLifeMonths: round(p.halfLifeMonths, 1), order: i + 1, to: t.id, toLabel: t.label, toState: t.state, adjacency: round(t.score), support: t.support })),
      )
      return { rows, columns: ['from', 'fromLabel', 'fromState', 'halfLifeMonths', 'order', 'to', 'toLabel', 'toState', 'adjacency', 'support'], json: paths, footer: notRunFooter(db) }
    },
  },
  reskilling: {
    description: 'people expected to need reskilling per rising skill and quarter, with an interval',
    build(db, _config, opts): ReportOutput {
      const forecast = readPlanOutputs<QuarterForecast>(db, 'reskilling')
        .map((r) => r.payload)
        .sort((a, b) => (a.skillId < b.skillId ? -1 : a.skillId > b.skillId ? 1 : a.quarter - b.quarter))
      const run = readPlanOutputs<{ baseMonth: string; assumptions: Record<string, unknown> }>(db, 'plan-run')[0]?.payload ?? null
      const pathways = readPlanOutputs<Pathway>(db, 'pathway').map((r) => r.payload)
      const candidates = readPlanOutputs<CandidateGroup>(db, 'candidates').map((r) => (opts.people ? r.payload : withoutPeople(r.payload)))
      const rows = limited(forecast, opts.limit).map((q) => ({
        skill: q.skillId,
        label: q.label,
        quarter: q.quarter,
        period: q.period,
        reskill: q.reskill,
        low: q.low,
        high: q.high,
        need: round(q.need, 1),
        supply: round(q.supply, 1),
        headcountNow: q.headcountNow,
        candidatesAvailable: q.candidatesAvailable,
      }))
      return {
        rows,
        columns: ['skill', 'label', 'quarter', 'period', 'reskill', 'low', 'high', 'need', 'supply', 'headcountNow', 'candidatesAvailable'],
        json: { baseMonth: run?.baseMonth ?? null, assumptions: run?.assumptions ?? null, forecast: limited(forecast, opts.limit), pathways, candidates },
        footer: notRunFooter(db) ?? (run ? `interval: central ${Math.round(100 * Number((run.assumptions['reskilling'] as { interval?: number })?.interval ?? 0.9))}% of simulated paths; quarters after ${run.baseMonth}` : undefined),
      }
    },
  },
  'reskilling-candidates': {
    description: 'per role, people strong in declining skills who lack the adjacent rising skills (counts; names with --people)',
    build(db, _config, opts): ReportOutput {
      const groups = limited(readPlanOutputs<CandidateGroup>(db, 'candidates').map((r) => r.payload), opts.limit)
      const rows = groups.flatMap((g) =>
        g.targets.map((t) => ({
          role: g.role,
          declining: g.decliningSkill,
          decliningLabel: g.decliningLabel,
          strong: g.strong,
          candidates: g.candidates,
          target: t.id,
          targetLabel: t.label,
          lacking: t.lacking,
          unassessed: t.unassessed,
          ...(opts.people ? { people: (g.people ?? []).filter((p) => p.lacks.includes(t.id)).map((p) => p.personId).join(';') } : {}),
        })),
      )
      const columns = ['role', 'declining', 'decliningLabel', 'strong', 'candidates', 'target', 'targetLabel', 'lacking', 'unassessed', ...(opts.people ? ['people'] : [])]
      return { rows, columns, json: groups.map((g) => (opts.people ? g : withoutPeople(g))), footer: notRunFooter(db) }
    },
  },
}

function withoutPeople(g: CandidateGroup): CandidateGroup {
  const { people: _people, ...rest } = g
  return rest
}
