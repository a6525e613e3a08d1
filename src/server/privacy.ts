/**
 * @module server/privacy
 * Aggregate-only display of people data. Coverage rows are per skill and role; a group smaller than
 * the minimum size (config.ability.minGroupSize) shows no numbers at all, and a group with too few
 * assessed people shows its headcount but no coverage or gap, because those would describe a
 * handful of identifiable people. This is applied here even when the ability stage suppressed
 * already: the dashboard is the last place it can be enforced.
 */
import type { CoverageRow } from '../db/dashboard.ts'

export interface CoverageFigure {
  role: string | null
  requiredTheta: number | null
  /** null when suppressed */
  headcount: number | null
  assessed: number | null
  /** expected fraction of assessed people meeting the requirement */
  coverage: number | null
  /** expected number of people short of the requirement, with interval */
  gap: number | null
  gapLow: number | null
  gapHigh: number | null
  suppressed: boolean
  /** why figures are hidden, in words */
  note: string | null
}

function coverageOf(meeting: number, assessed: number, stored: number | null): number | null {
  if (stored !== null && Number.isFinite(stored)) return stored
  return assessed > 0 ? meeting / assessed : null
}

/** One role's coverage of a skill, suppressed below the minimum group size. */
export function coverageFigure(row: CoverageRow, minGroup: number): CoverageFigure {
  if (row.headcount < minGroup) {
    return {
      role: row.role, requiredTheta: row.required_theta, headcount: null, assessed: null, coverage: null, gap: null, gapLow: null, gapHigh: null,
      suppressed: true, note: `fewer than ${minGroup} people in this role: hidden`,
    }
  }
  if (row.assessed < minGroup) {
    return {
      role: row.role, requiredTheta: row.required_theta, headcount: row.headcount, assessed: null, coverage: null, gap: null, gapLow: null, gapHigh: null,
      suppressed: true, note: `fewer than ${minGroup} people assessed: hidden`,
    }
  }
  return {
    role: row.role,
    requiredTheta: row.required_theta,
    headcount: row.headcount,
    assessed: row.assessed,
    coverage: coverageOf(row.expected_meeting, row.assessed, row.coverage),
    gap: row.expected_gap,
    gapLow: row.gap_low,
    gapHigh: row.gap_high,
    suppressed: false,
    note: row.unknown > 0 ? `${row.unknown} not assessed` : null,
  }
}

/**
 * A skill's coverage summed over roles; suppressed when the total group is below the minimum.
 * Gap intervals are added end to end (a conservative, wider interval than a joint one).
 */
export function aggregateCoverage(rows: readonly CoverageRow[], minGroup: number): CoverageFigure | null {
  if (rows.length === 0) return null
  let headcount = 0
  let assessed = 0
  let meeting = 0
  let gap = 0
  let gapLow = 0
  let gapHigh = 0
  for (const r of rows) {
    headcount += r.headcount
    assessed += r.assessed
    meeting += r.expected_meeting
    gap += r.expected_gap
    gapLow += r.gap_low
    gapHigh += r.gap_high
  }
  const role = rows.length === 1 ? rows[0]!.role : null
  if (headcount < minGroup || assessed < minGroup) {
    return {
      role, requiredTheta: null, headcount: null, assessed: null, coverage: null, gap: null, gapLow: null, gapHigh: null,
      suppressed: true, note: `group under ${minGroup}: hidden`,
    }
  }
  return { role, requiredTheta: null, headcount, assessed, coverage: meeting / assessed, gap, gapLow, gapHigh, suppressed: false, note: null }
}
