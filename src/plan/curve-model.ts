/**
 * @module plan/curve-model
 * Reads a fitted demand curve (a row of `curves`) into what the planning outputs need: whether it is
 * evidence at all, its monthly exponential rate (with a low and a high end), and its forecast band
 * per month ahead, so that demand paths can be drawn for the reskilling simulation.
 */
import type { CurveRecord } from '../db/plan.ts'
import { curveRowDetails } from '../curves/stored-series.ts'

export type CurveState = 'emerging' | 'rising' | 'steady' | 'declining' | 'fading' | 'insufficient-evidence'

export const RISING_STATES: readonly string[] = ['emerging', 'rising']
export const DECLINING_STATES: readonly string[] = ['declining', 'fading']

/** A forecast band at `monthsAhead` months after the latest fitted month. */
export interface ForecastBand {
  monthsAhead: number
  mid: number
  low: number
  high: number
}

export interface SkillCurve {
  id: string
  state: string
  /** true when the curve has a usable state and shares */
  evidenced: boolean
  annualGrowth: number | null
  pAdjusted: number | null
  latestShare: number | null
  /**
   * the share the forecast starts from: the fitted share at the latest month when the curve records
   * one (`details.fittedLatestShare`, on the forecast's own scale), else the latest share
   */
  baseShare: number | null
  forecastShare12: number | null
  halfLifeMonths: number | null
  halfLifeLow: number | null
  halfLifeHigh: number | null
  /** monthly log-rate of the share: share(t) = share(0)·exp(rate·t); null when unknown */
  rate: number | null
  /** the fast-decline (or slow-growth) end and the other end, from the intervals; null when unknown */
  rateLow: number | null
  rateHigh: number | null
  bands: ForecastBand[]
  /** central probability of the bands (0.95 unless the curve says otherwise) */
  bandLevel: number
  /** the latest month the curve was fitted on ('YYYY-MM'), when the curve records it */
  lastMonth: string | null
}

const LN2 = Math.log(2)

function finite(x: unknown): x is number {
  return typeof x === 'number' && Number.isFinite(x)
}

/** Monthly log-rate from a fractional annual growth g (share multiplies by 1+g per year). */
export function rateFromAnnualGrowth(g: number | null): number | null {
  if (!finite(g) || g <= -1) return null
  return Math.log(1 + g) / 12
}

/** Monthly log-rate from a half-life in months (negative: decline). */
export function rateFromHalfLife(h: number | null): number | null {
  if (!finite(h) || h <= 0) return null
  return -LN2 / h
}

function pick(obj: Record<string, unknown>, names: readonly string[]): number | null {
  for (const n of names) if (finite(obj[n])) return obj[n]
  return null
}

/**
 * Reads forecast bands from a curve's details. Accepts an array under `forecast`, `bands` or
 * `forecastBands`, each element with a middle (`share`, `mid`, `mean`, `value`, `fit`, `forecast`), a
 * low (`low`, `lower`, `lo`) and a high (`high`, `upper`, `hi`) share and optionally its distance
 * (`monthsAhead`, `h`, `step`, `ahead`); elements without a distance are 1, 2, 3, ... months ahead.
 */
export function parseBands(details: Record<string, unknown>): { bands: ForecastBand[]; level: number } {
  const raw = details['forecast'] ?? details['bands'] ?? details['forecastBands']
  const levelRaw = pick(details, ['forecastLevel', 'bandLevel', 'level'])
  const level = levelRaw !== null && levelRaw > 0 && levelRaw < 1 ? levelRaw : 0.95
  if (!Array.isArray(raw)) return { bands: [], level }
  const bands: ForecastBand[] = []
  raw.forEach((el, i) => {
    if (el === null || typeof el !== 'object') return
    const o = el as Record<string, unknown>
    const mid = pick(o, ['share', 'mid', 'mean', 'value', 'fit', 'forecast'])
    const low = pick(o, ['low', 'lower', 'lo'])
    const high = pick(o, ['high', 'upper', 'hi'])
    const ahead = pick(o, ['monthsAhead', 'h', 'step', 'ahead']) ?? i + 1
    if (mid === null || low === null || high === null || ahead <= 0) return
    bands.push({ monthsAhead: ahead, mid: Math.max(mid, 0), low: Math.max(Math.min(low, mid), 0), high: Math.max(high, mid) })
  })
  bands.sort((a, b) => a.monthsAhead - b.monthsAhead)
  return { bands, level }
}

/** Turns a curves row into a SkillCurve. Malformed details are treated as absent, never fatal. */
export function readSkillCurve(row: CurveRecord): SkillCurve {
  const details = curveRowDetails(row)
  const { bands, level } = parseBands(details)
  const evidenced = row.state !== 'insufficient-evidence' && finite(row.latest_share) && finite(row.forecast_share12)
  // a half-life, when given, is the curve's own statement of its decay; otherwise use the growth
  const rate = rateFromHalfLife(row.half_life_months) ?? rateFromAnnualGrowth(row.annual_growth)
  // a short half-life is the fast end of a decline, a long one the slow end
  const fromHalfLow = rateFromHalfLife(row.half_life_low)
  const fromHalfHigh = finite(row.half_life_high) ? rateFromHalfLife(row.half_life_high) : null
  const rateLow = fromHalfLow ?? rateFromAnnualGrowth(row.growth_low)
  const rateHigh = fromHalfHigh ?? rateFromAnnualGrowth(row.growth_high)
  const lastMonth = typeof details['lastMonth'] === 'string' ? (details['lastMonth'] as string) : typeof details['latestMonth'] === 'string' ? (details['latestMonth'] as string) : null
  return {
    id: row.concept_id,
    state: row.state,
    evidenced,
    annualGrowth: row.annual_growth,
    pAdjusted: row.p_adjusted,
    latestShare: row.latest_share,
    baseShare: finite(details['fittedLatestShare']) && details['fittedLatestShare'] >= 0 ? details['fittedLatestShare'] : row.latest_share,
    forecastShare12: row.forecast_share12,
    halfLifeMonths: row.half_life_months,
    halfLifeLow: row.half_life_low,
    halfLifeHigh: row.half_life_high,
    rate,
    rateLow: rateLow === null || rate === null ? rateLow : Math.min(rateLow, rate),
    rateHigh: rateHigh === null || rate === null ? rateHigh : Math.max(rateHigh, rate),
    bands,
    bandLevel: level,
    lastMonth,
  }
}

/**
 * Half-life in months of a declining curve: the curve's own figure, else derived from its rate.
 * Null for curves that do not decline.
 */
export function halfLifeOf(curve: SkillCurve): number | null {
  if (finite(curve.halfLifeMonths) && curve.halfLifeMonths > 0) return curve.halfLifeMonths
  if (curve.rate !== null && curve.rate < 0) return -LN2 / curve.rate
  return null
}
