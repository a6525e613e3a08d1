/**
 * @module curves/rows
 * What the fit stage stores and announces for each fitted skill: its `curves` row (figures in
 * columns, the method's details as JSON) and, when its state moved, the `skill.state-changed`
 * event. Pure: built wherever the skill was decided (the stage's thread or a fit worker thread).
 */
import type { CurveRow, CurveRowToStore } from '../db/curves.ts'
import type { SkillCurve } from './fit-skill.ts'
import { isMonth, monthIndex } from './months.ts'

type MonthSeries = { months: readonly string[]; values: number[] }

function isMonthSeries(x: unknown): x is MonthSeries {
  return typeof x === 'object' && x !== null && Array.isArray((x as MonthSeries).months) && Array.isArray((x as MonthSeries).values)
}

/** Month lists already checked to be consecutive (every skill of a run shares the run's list). */
const consecutiveLists = new WeakMap<readonly string[], boolean>()

/**
 * A month series as stored in details_json: its first month and its values when the months are
 * consecutive (`{ start, values }`; server/payloads.ts readMonthSeries expands it), else as it is.
 * The fitted and combined series' month strings were a fifth of the details' bytes.
 */
export function compactSeries<T>(series: T): T | { start: string; values: number[] } {
  if (!isMonthSeries(series) || series.months.length === 0 || series.months.length !== series.values.length) return series
  let consecutive = consecutiveLists.get(series.months)
  if (consecutive === undefined) {
    const first = monthIndex(series.months[0]!)
    consecutive = series.months.every((month, i) => isMonth(month) && monthIndex(month) === first + i)
    consecutiveLists.set(series.months, consecutive)
  }
  return consecutive ? { start: series.months[0]!, values: series.values } : series
}

const finite = (x: number | null | undefined): number | null => (x !== null && x !== undefined && Number.isFinite(x) ? x : null)

/** The stored row of a fitted curve; details carry the method figures the columns do not. */
export function curveRow(curve: SkillCurve, fittedAt: string): CurveRow {
  return {
    concept_id: curve.id,
    state: curve.state,
    annual_growth: finite(curve.annualGrowth),
    growth_low: finite(curve.annualGrowthInterval?.[0]),
    growth_high: finite(curve.annualGrowthInterval?.[1]),
    half_life_months: finite(curve.halfLifeMonths),
    half_life_low: finite(curve.halfLifeInterval?.[0]),
    half_life_high: finite(curve.halfLifeInterval?.[1]),
    p_value: finite(curve.pValue),
    p_adjusted: finite(curve.pAdjusted),
    latest_share: finite(curve.latestShare),
    forecast_share12: finite(curve.forecastShare12),
    forecast_method: curve.forecastMethod,
    change_month: curve.changeMonth,
    emerged_month: curve.emergedMonth,
    details_json: JSON.stringify({
      ...curve.details,
      fitted: compactSeries(curve.details.fitted),
      combined: compactSeries(curve.details.combined),
      stateReason: curve.stateReason,
      beta: curve.beta,
      betaInterval: curve.betaInterval,
      mannKendall: curve.mannKendall,
      senSlope: curve.senSlope,
      latestMonth: curve.latestMonth,
    }),
    fitted_at: fittedAt,
  }
}

/** The evidence a `skill.state-changed` event carries. */
export function stateEvent(curve: SkillCurve, before: string | null): Record<string, unknown> {
  return {
    id: curve.id,
    label: curve.label,
    before,
    after: curve.state,
    reason: curve.stateReason,
    evidence: {
      annualGrowth: finite(curve.annualGrowth),
      annualGrowthInterval: curve.annualGrowthInterval,
      halfLifeMonths: finite(curve.halfLifeMonths),
      halfLifeInterval: curve.halfLifeInterval,
      pValue: finite(curve.pValue),
      pAdjusted: finite(curve.pAdjusted),
      mannKendall: curve.mannKendall ? { tau: curve.mannKendall.tau, p: curve.mannKendall.pValue, seasonal: curve.mannKendall.seasonal } : null,
      changeMonth: curve.changeMonth,
      emergedMonth: curve.emergedMonth,
      latestMonth: curve.latestMonth,
      latestShare: finite(curve.latestShare),
      forecastShare12: finite(curve.forecastShare12),
      forecastMethod: curve.forecastMethod,
    },
  }
}

const FLAGGED: readonly string[] = ['emerging', 'rising', 'declining', 'fading']

/**
 * Whether a skill's new state is announced: when it differs from the stored one, and for a skill
 * fitted for the first time only when it is flagged (emerging, rising, declining, fading), so that a
 * first run does not announce thousands of steady skills.
 */
export function announced(before: string | null, state: string): boolean {
  return before !== state && (before !== null || FLAGGED.includes(state))
}

/** The rows, the state-change events (null: not announced) and the count per state of decided skills, in their order. */
export interface FittedRows {
  /** details as UTF-8 bytes (see CurveRowToStore) */
  rows: CurveRowToStore[]
  events: (Record<string, unknown> | null)[]
  states: Record<string, number>
}

/** {@link FittedRows} of decided skills, given each skill's stored state before this fit. */
export function fittedRows(curves: readonly SkillCurve[], previous: ReadonlyMap<string, string>, fittedAt: string): FittedRows {
  const out: FittedRows = { rows: [], events: [], states: {} }
  for (const curve of curves) {
    const row: CurveRowToStore = curveRow(curve, fittedAt)
    row.details_json = Buffer.from(row.details_json as string)
    out.rows.push(row)
    out.states[curve.state] = (out.states[curve.state] ?? 0) + 1
    const before = previous.get(curve.id) ?? null
    out.events.push(announced(before, curve.state) ? stateEvent(curve, before) : null)
  }
  return out
}
