/**
 * @module ability/report
 * `tides report coverage`: per skill and role, and per skill over all roles requiring it (role
 * `*`), the headcount, people assessed and never assessed, SE-aware coverage, expected meeting and
 * expected gap over the whole headcount (headcount × coverage, headcount × (1 − coverage)) with the
 * conservative gap interval, and the same figures for the assessed people alone. Figures resting on
 * fewer assessed people than `ability.minGroupSize` are suppressed (with complementary suppression
 * against the skill totals). Person-level rows only with `--people`.
 *
 * The report recomputes coverage from the current people, roles and abilities (staleness judged
 * now), so the per-skill totals get an exact interval rather than a sum of per-role intervals.
 */
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import * as store from '../db/ability.ts'
import type { ReportOptions, ReportOutput } from '../commands/registry.ts'
import { currentAbilities } from './current.ts'
import { buildCoverage, ALL_ROLES, type CoverageRow } from './coverage-table.ts'
import { suppressionReasons } from './suppress.ts'

const ROUND = 1e4
function round(value: number | null): number | null {
  return value === null ? null : Math.round(value * ROUND) / ROUND
}

export const COVERAGE_COLUMNS = [
  'skill_id', 'label', 'role', 'required_theta', 'headcount', 'assessed', 'unknown', 'stale', 'coverage',
  'expected_meeting', 'expected_gap', 'gap_low', 'gap_high', 'expected_gap_assessed', 'gap_low_assessed', 'gap_high_assessed', 'suppressed',
] as const

export const PEOPLE_COLUMNS = [
  'person_id', 'role', 'skill_id', 'label', 'required_theta', 'theta', 'se', 'se_reported', 'stale', 'origin', 'assessed_at', 'p_meet',
] as const

/**
 * Build the coverage report.
 *
 * @example coverageReport(db, config, {}).json // => [{ skillId: 'sql', role: '*', coverage: 0.62, ... }, ...]
 */
export function coverageReport(db: Db, config: Config, opts: ReportOptions & { now?: Date } = {}): ReportOutput {
  const cfg = config.ability
  const now = opts.now ?? new Date()
  const labels = store.readSkillLabels(db)
  const current = currentAbilities(store.readAbilities(db), now, { staleAfterDays: cfg.staleAfterDays, seInflation: cfg.seInflation })
  const coverage = buildCoverage(store.readPeople(db), store.readRequirements(db), current, cfg.intervalLevel)

  if (opts.people) {
    const people = coverage.people.map((row) => ({
      personId: row.personId,
      role: row.role,
      skillId: row.skillId,
      label: labels.get(row.skillId) ?? null,
      requiredTheta: row.requiredTheta,
      theta: round(row.theta),
      se: round(row.se),
      seReported: round(row.seReported),
      stale: row.stale,
      origin: row.origin,
      assessedAt: row.assessedAt,
      pMeet: round(row.pMeet),
    }))
    const rows = people.map((p) => ({
      person_id: p.personId, role: p.role, skill_id: p.skillId, label: p.label ?? '', required_theta: p.requiredTheta,
      theta: p.theta, se: p.se, se_reported: p.seReported, stale: p.stale, origin: p.origin ?? 'never assessed',
      assessed_at: p.assessedAt, p_meet: p.pMeet,
    }))
    return {
      rows,
      columns: [...PEOPLE_COLUMNS],
      json: people,
      footer: 'person-level rows (--people): keep them to the people entitled to see them',
    }
  }

  // skill totals first, then its roles; suppression over each skill's family of rows
  const ordered: CoverageRow[] = []
  const rolesBySkill = new Map<string, CoverageRow[]>()
  for (const row of coverage.byRole) rolesBySkill.set(row.skillId, [...(rolesBySkill.get(row.skillId) ?? []), row])
  for (const total of coverage.bySkill) ordered.push(total, ...(rolesBySkill.get(total.skillId) ?? []))
  const reasons = suppressionReasons(
    ordered.map((row) => ({ size: row.assessed, family: row.skillId, isTotal: row.role === ALL_ROLES })),
    cfg.minGroupSize,
  )
  const limited = opts.limit === undefined ? ordered : ordered.slice(0, opts.limit)
  const json = limited.map((row, i) => {
    const hidden = reasons[i] !== null
    const show = <T,>(value: T): T | null => (hidden ? null : value)
    return {
      skillId: row.skillId,
      label: labels.get(row.skillId) ?? null,
      role: row.role,
      requiredTheta: row.requiredTheta,
      headcount: row.headcount,
      assessed: row.assessed,
      unknown: row.unknown,
      stale: show(row.stale),
      coverage: show(round(row.coverage)),
      expectedMeeting: show(round(row.expectedMeeting)),
      expectedGap: show(round(row.expectedGap)),
      gapInterval: show(row.gapInterval),
      expectedMeetingAssessed: show(round(row.expectedMeetingAssessed)),
      expectedGapAssessed: show(round(row.expectedGapAssessed)),
      gapIntervalAssessed: show(row.gapIntervalAssessed),
      level: row.level,
      suppressed: reasons[i],
    }
  })
  const rows = json.map((r) => ({
    skill_id: r.skillId, label: r.label ?? '', role: r.role, required_theta: r.requiredTheta, headcount: r.headcount,
    assessed: r.assessed, unknown: r.unknown, stale: r.stale, coverage: r.coverage, expected_meeting: r.expectedMeeting,
    expected_gap: r.expectedGap, gap_low: r.gapInterval?.[0] ?? null, gap_high: r.gapInterval?.[1] ?? null,
    expected_gap_assessed: r.expectedGapAssessed, gap_low_assessed: r.gapIntervalAssessed?.[0] ?? null,
    gap_high_assessed: r.gapIntervalAssessed?.[1] ?? null, suppressed: r.suppressed ?? '',
  }))
  const suppressed = reasons.filter((r) => r !== null).length
  return {
    rows,
    columns: [...COVERAGE_COLUMNS],
    json,
    footer:
      `coverage = mean of Phi((theta - required)/SE) over assessed people; gaps over the headcount assume the never-assessed ` +
      `resemble the assessed, and their ${Math.round(cfg.intervalLevel * 100)}% interval lets each never-assessed person be 0..1. ` +
      `role * = all roles requiring the skill.` +
      (suppressed ? ` ${suppressed} groups with fewer than ${cfg.minGroupSize} assessed people are suppressed.` : ''),
  }
}
