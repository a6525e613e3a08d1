/**
 * @module server/privacy
 * Aggregate-only display of people data. Coverage rows are per skill and role; the dashboard shows
 * them per role (skill page) and summed over roles (overview). Figures resting on fewer people than
 * config.ability.minGroupSize are hidden, and because a skill's total is shown too, the ability
 * stage's complementary suppression (src/ability/suppress.ts) hides further roles where the total
 * minus the visible roles would give a hidden one back. Applied here even if a stage suppressed
 * already: the dashboard is the last place it can be enforced.
 *
 * Coverage columns (see src/db/ability.ts): coverage = Σp / assessed, expected_meeting = Σp,
 * expected_gap = assessed − Σp with interval [gap_low, gap_high]; `unknown` people were never assessed.
 */
import { suppressionReasons, type SuppressionReason } from '../ability/suppress.ts'
import type { CoverageRow } from '../db/dashboard.ts'

export interface CoverageFigure {
  /** null for the total over roles */
  role: string | null
  requiredTheta: number | null
  /** null when the role has fewer people than the minimum */
  headcount: number | null
  assessed: number | null
  unknown: number | null
  /** expected fraction of assessed people meeting the requirement */
  coverage: number | null
  /** expected number of assessed people short of the requirement, with interval */
  gap: number | null
  gapLow: number | null
  gapHigh: number | null
  suppressed: boolean
  /** why figures are hidden, in words */
  note: string | null
}

function hidden(role: string | null, requiredTheta: number | null, headcount: number | null, note: string): CoverageFigure {
  return { role, requiredTheta, headcount, assessed: null, unknown: null, coverage: null, gap: null, gapLow: null, gapHigh: null, suppressed: true, note }
}

function why(reason: SuppressionReason, min: number): string {
  return reason === 'complementary' ? `hidden so that a smaller group cannot be worked out from the total` : `fewer than ${min} people assessed: hidden`
}

/**
 * One skill's coverage per role and in total, with small groups and their complements hidden.
 * @param rows the skill's coverage rows (all roles)
 */
export function skillCoverage(rows: readonly CoverageRow[], min: number): { total: CoverageFigure | null; byRole: CoverageFigure[] } {
  if (rows.length === 0) return { total: null, byRole: [] }
  const sum = (f: (r: CoverageRow) => number) => rows.reduce((a, r) => a + f(r), 0)
  const totalAssessed = sum((r) => r.assessed)
  const reasons = suppressionReasons(
    [...rows.map((r) => ({ size: r.assessed, family: 'skill' })), { size: totalAssessed, family: 'skill', isTotal: true }],
    min,
  )
  // headcounts are suppressed the same way on their own sizes, so total minus the shown roles never
  // gives a small role's headcount back
  const totalHeadcount = rows.reduce((a, r) => a + r.headcount, 0)
  const headReasons = suppressionReasons(
    [...rows.map((r) => ({ size: r.headcount, family: 'skill' })), { size: totalHeadcount, family: 'skill', isTotal: true }],
    min,
  )
  const byRole = rows.map((r, i): CoverageFigure => {
    const headcount = headReasons[i] === null ? r.headcount : null
    const reason = reasons[i] ?? null
    if (reason !== null) return hidden(r.role, r.required_theta, headcount, why(reason, min))
    return {
      role: r.role, requiredTheta: r.required_theta, headcount, assessed: r.assessed, unknown: r.unknown,
      coverage: r.coverage ?? (r.assessed > 0 ? r.expected_meeting / r.assessed : null),
      gap: r.expected_gap, gapLow: r.gap_low, gapHigh: r.gap_high, suppressed: false,
      note: r.unknown > 0 ? `${r.unknown} never assessed (not in the gap)` : null,
    }
  })
  const totalReason = reasons[rows.length] ?? null
  const headcount = headReasons[rows.length] === null ? totalHeadcount : null
  const total: CoverageFigure =
    totalReason !== null
      ? hidden(null, null, headcount, why(totalReason, min))
      : {
          role: null, requiredTheta: null, headcount, assessed: totalAssessed, unknown: sum((r) => r.unknown),
          coverage: totalAssessed > 0 ? sum((r) => r.expected_meeting) / totalAssessed : null,
          // gap intervals of roles added end to end: wider (more cautious) than a joint interval
          gap: sum((r) => r.expected_gap), gapLow: sum((r) => r.gap_low), gapHigh: sum((r) => r.gap_high),
          suppressed: false, note: null,
        }
  return { total, byRole }
}

/** Coverage figures of many skills at once (rows in any order). */
export function coverageBySkill(rows: readonly CoverageRow[], min: number): Map<string, ReturnType<typeof skillCoverage>> {
  const groups = new Map<string, CoverageRow[]>()
  for (const r of rows) {
    const list = groups.get(r.skill_id)
    if (list) list.push(r)
    else groups.set(r.skill_id, [r])
  }
  const out = new Map<string, ReturnType<typeof skillCoverage>>()
  for (const [id, list] of groups) out.set(id, skillCoverage(list, min))
  return out
}

/** The figure the overview shows: the role's when filtering by role, else the total. */
export function figureFor(c: ReturnType<typeof skillCoverage> | undefined, role: string | undefined): CoverageFigure | null {
  if (!c) return null
  if (!role) return c.total
  return c.byRole.find((f) => f.role === role) ?? null
}
