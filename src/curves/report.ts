/**
 * @module curves/report
 * `tides report skills [--json|--csv]`: every fitted skill with its state, growth, half-life,
 * adjusted p-value, latest and forecast share, and the details of the methods behind them.
 */
import type { Report, ReportOutput } from '../commands/registry.ts'
import type { Db } from '../db/connection.ts'
import { readCurvesWithLabels } from '../db/curves.ts'
import type { CurveRow } from '../db/curves.ts'
import { SKILL_STATES } from './state.ts'
import { curveRowDetails } from './stored-series.ts'

function round(x: number | null | undefined, digits: number): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null
  return Number(x.toPrecision(digits))
}

const pick = <T>(details: Record<string, unknown>, key: string): T | null => (details[key] === undefined ? null : (details[key] as T))

/** One skill as `--json` prints it: DESIGN.md's fields first, then the method details. */
export function skillJson(row: CurveRow & { label: string | null }): Record<string, unknown> {
  const details = curveRowDetails(row)
  const declining = row.state === 'declining' || row.state === 'fading'
  const mannKendall = pick<{ s: number; tau: number; z: number; pValue: number; n: number; seasonal: boolean }>(details, 'mannKendall')
  return {
    id: row.concept_id,
    label: row.label ?? row.concept_id,
    state: row.state,
    annualGrowth: row.annual_growth,
    halfLifeMonths: declining ? row.half_life_months : null,
    halfLifeInterval: declining && row.half_life_low !== null ? [row.half_life_low, row.half_life_high] : null,
    pAdjusted: row.p_adjusted,
    latestShare: row.latest_share,
    forecastShare12: row.forecast_share12,
    annualGrowthInterval: row.growth_low !== null && row.growth_high !== null ? [row.growth_low, row.growth_high] : null,
    pValue: row.p_value,
    reason: pick<string>(details, 'stateReason'),
    latestMonth: pick<string>(details, 'latestMonth'),
    changeMonth: row.change_month,
    emergedMonth: row.emerged_month,
    forecastMethod: row.forecast_method,
    forecast: pick(details, 'forecast'),
    methods: {
      trend: pick<string>(details, 'model'),
      regime: pick(details, 'regime'),
      beta: pick(details, 'beta'),
      betaInterval: pick(details, 'betaInterval'),
      fullWindowSlope: pick(details, 'fullWindowSlope'),
      dispersion: pick(details, 'dispersion'),
      harmonics: pick(details, 'harmonics'),
      qaic: pick(details, 'qaic'),
      mannKendall: mannKendall ? { s: mannKendall.s, tau: mannKendall.tau, z: mannKendall.z, p: mannKendall.pValue, months: mannKendall.n, seasonal: mannKendall.seasonal } : null,
      senSlope: pick(details, 'senSlope'),
      change: pick(details, 'change'),
      bursts: pick(details, 'bursts'),
      oneStepMse: pick(details, 'oneStepMse'),
      forecastOrigins: pick(details, 'forecastOrigins'),
      dampedHolt: pick(details, 'holt'),
      alternativeForecast12: pick(details, 'alternativeForecast12'),
      sources: pick(details, 'sources'),
      sourceSlopes: pick(details, 'sourceSlopes'),
    },
    fittedAt: row.fitted_at,
  }
}

export const SKILL_COLUMNS = [
  'id', 'label', 'state', 'annualGrowth', 'growthLow', 'growthHigh', 'halfLifeMonths', 'halfLifeLow', 'halfLifeHigh',
  'pValue', 'pAdjusted', 'latestShare', 'forecastShare12', 'forecastMethod', 'changeMonth', 'emergedMonth', 'latestMonth',
  'mannKendallTau', 'mannKendallP', 'senSlope', 'reason',
]

/** One skill as a flat row for the table and --csv. */
export function skillRow(row: CurveRow & { label: string | null }): Record<string, unknown> {
  const json = skillJson(row)
  const methods = json['methods'] as Record<string, unknown>
  const mannKendall = methods['mannKendall'] as { tau: number; p: number } | null
  const sen = methods['senSlope'] as { slope: number } | null
  const halfLife = json['halfLifeInterval'] as [number, number | null] | null
  return {
    id: json['id'],
    label: json['label'],
    state: json['state'],
    annualGrowth: round(row.annual_growth, 4),
    growthLow: round(row.growth_low, 4),
    growthHigh: round(row.growth_high, 4),
    halfLifeMonths: round(json['halfLifeMonths'] as number | null, 4),
    halfLifeLow: round(halfLife?.[0], 4),
    halfLifeHigh: round(halfLife?.[1], 4),
    pValue: round(row.p_value, 3),
    pAdjusted: round(row.p_adjusted, 3),
    latestShare: round(row.latest_share, 4),
    forecastShare12: round(row.forecast_share12, 4),
    forecastMethod: row.forecast_method ?? '',
    changeMonth: row.change_month ?? '',
    emergedMonth: row.emerged_month ?? '',
    latestMonth: json['latestMonth'] ?? '',
    mannKendallTau: round(mannKendall?.tau, 3),
    mannKendallP: round(mannKendall?.p, 3),
    senSlope: round(sen?.slope, 3),
    reason: json['reason'] ?? '',
  }
}

/**
 * The skills report: flagged states first (emerging, rising, declining, fading), then steady and
 * insufficient-evidence; within a state by id.
 */
export function skillsReport(db: Db, opts: { limit?: number }): ReportOutput {
  const order = new Map<string, number>([['emerging', 0], ['rising', 1], ['declining', 2], ['fading', 3], ['steady', 4], ['insufficient-evidence', 5]])
  const rows = readCurvesWithLabels(db).sort(
    (a, b) => (order.get(a.state) ?? SKILL_STATES.length) - (order.get(b.state) ?? SKILL_STATES.length) || (a.concept_id < b.concept_id ? -1 : 1),
  )
  const limited = opts.limit === undefined ? rows : rows.slice(0, opts.limit)
  return {
    rows: limited.map(skillRow),
    columns: SKILL_COLUMNS,
    json: limited.map(skillJson),
    footer: rows.length === 0 ? 'the curves have not been fitted yet: run `tides run fit`' : undefined,
  }
}

export const SKILLS_REPORT: Report = {
  description: 'demand curve per skill: state, annual growth, half-life (declining skills), adjusted p-value, latest and 12-month forecast share, method details',
  build: (db, _config, opts) => skillsReport(db, { ...(opts.limit !== undefined ? { limit: opts.limit } : {}) }),
}
