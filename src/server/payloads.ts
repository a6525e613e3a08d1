/**
 * @module server/payloads
 * Reads the JSON columns other stages write (curves.details_json, plan_outputs.payload_json,
 * candidate_terms.trend_json/examples_json) into the shapes the pages use. Unknown or malformed
 * content degrades to "not available" instead of failing the page.
 */
import { isMonth, monthIndex, monthLabel } from '../curves/months.ts'
import { finite } from './format.ts'

export function parseJson(text: string | null | undefined): unknown {
  if (!text) return null
  try {
    return JSON.parse(text) as unknown
  } catch {
    return null
  }
}

export function isRecord(x: unknown): x is Record<string, unknown> {
  return typeof x === 'object' && x !== null && !Array.isArray(x)
}

function pick(o: Record<string, unknown>, ...keys: string[]): unknown {
  for (const k of keys) if (o[k] !== undefined) return o[k]
  return undefined
}

function numArray(x: unknown): (number | null)[] | null {
  return Array.isArray(x) ? x.map(finite) : null
}

function strArray(x: unknown): string[] | null {
  return Array.isArray(x) && x.every((v) => typeof v === 'string') ? (x as string[]) : null
}

/** A series over months: parallel arrays. */
export interface MonthSeries {
  months: string[]
  values: (number | null)[]
}

/** Reads `{months, values}` or `[{month, value}]`-style series under several common key names. */
export function readMonthSeries(x: unknown, valueKeys: string[] = ['value', 'share', 'mean', 'fitted', 'index']): MonthSeries | null {
  if (Array.isArray(x)) {
    const months: string[] = []
    const values: (number | null)[] = []
    for (const p of x) {
      if (!isRecord(p) || typeof p['month'] !== 'string') return null
      months.push(p['month'])
      values.push(finite(pick(p, ...valueKeys)))
    }
    return { months, values }
  }
  if (isRecord(x) && typeof x['start'] === 'string' && isMonth(x['start'])) {
    // the stored compact form of consecutive months (curves/stage.ts compactSeries)
    const values = numArray(x['values'])
    if (!values) return null
    const first = monthIndex(x['start'])
    return { months: values.map((_, i) => monthLabel(first + i)), values }
  }
  if (isRecord(x)) {
    const months = strArray(x['months'])
    const values = numArray(pick(x, 'values', ...valueKeys))
    if (months && values && months.length === values.length) return { months, values }
  }
  return null
}

export interface ForecastBand {
  months: string[]
  mean: (number | null)[]
  lo80: (number | null)[]
  hi80: (number | null)[]
  lo95: (number | null)[]
  hi95: (number | null)[]
}

/** Reads a forecast with 80% and 95% bands from row-wise or column-wise JSON. */
export function readForecast(x: unknown): ForecastBand | null {
  if (Array.isArray(x)) {
    const out: ForecastBand = { months: [], mean: [], lo80: [], hi80: [], lo95: [], hi95: [] }
    for (const p of x) {
      if (!isRecord(p) || typeof p['month'] !== 'string') return null
      out.months.push(p['month'])
      out.mean.push(finite(pick(p, 'mean', 'value', 'share', 'point')))
      out.lo80.push(finite(pick(p, 'lo80', 'low80', 'lower80')))
      out.hi80.push(finite(pick(p, 'hi80', 'high80', 'upper80')))
      out.lo95.push(finite(pick(p, 'lo95', 'low95', 'lower95')))
      out.hi95.push(finite(pick(p, 'hi95', 'high95', 'upper95')))
    }
    return out.months.length ? out : null
  }
  if (isRecord(x)) {
    const months = strArray(x['months'])
    if (!months) return null
    const col = (...keys: string[]) => numArray(pick(x, ...keys)) ?? months.map(() => null)
    return {
      months,
      mean: col('mean', 'values', 'value', 'point'),
      lo80: col('lo80', 'low80', 'lower80'),
      hi80: col('hi80', 'high80', 'upper80'),
      lo95: col('lo95', 'low95', 'lower95'),
      hi95: col('hi95', 'high95', 'upper95'),
    }
  }
  return null
}

/** One statistical test result as the curves stage recorded it. */
export interface TestResult {
  name: string
  statistic: number | null
  p: number | null
  pAdjusted: number | null
  /** the stage's own sentence, when it wrote one */
  text: string | null
}

/** Reads `tests` as an array of results or a map name -> result. */
export function readTests(x: unknown): TestResult[] {
  const entries: [string, unknown][] = Array.isArray(x)
    ? x.map((t, i) => [isRecord(t) && typeof t['name'] === 'string' ? t['name'] : `test ${i + 1}`, t])
    : isRecord(x)
      ? Object.entries(x)
      : []
  const out: TestResult[] = []
  for (const [name, t] of entries) {
    if (!isRecord(t)) continue
    out.push({
      name,
      statistic: finite(pick(t, 'statistic', 'S', 'z', 'tau', 'slope')),
      p: finite(pick(t, 'p', 'pValue', 'p_value')),
      pAdjusted: finite(pick(t, 'pAdjusted', 'p_adjusted', 'q')),
      text: typeof t['text'] === 'string' ? t['text'] : typeof t['summary'] === 'string' ? t['summary'] : null,
    })
  }
  return out
}

/** The parts of curves.details_json the skill page shows. */
export interface CurveDetails {
  fitted: MonthSeries | null
  forecast: ForecastBand | null
  tests: TestResult[]
  model: string | null
  /** the combined demand index (sources weighted, on the share scale) the curve is fitted to */
  combined: MonthSeries | null
  /** why the curves stage chose the state, in its words */
  stateReason: string | null
}

/** The skill page's parts of a curve's details (curves/stored-series.ts curveRowDetails gives them). */
export function readCurveDetails(d: unknown): CurveDetails {
  if (!isRecord(d)) return { fitted: null, forecast: null, tests: [], model: null, combined: null, stateReason: null }
  return {
    fitted: readMonthSeries(pick(d, 'fitted', 'fit', 'fittedCurve')),
    forecast: readForecast(pick(d, 'forecast', 'forecastBands')),
    tests: readTests(pick(d, 'tests', 'testResults')),
    model: typeof d['model'] === 'string' ? d['model'] : null,
    combined: readMonthSeries(pick(d, 'combined', 'index', 'series')),
    stateReason: typeof d['stateReason'] === 'string' ? d['stateReason'] : null,
  }
}

/** One part of a need's score as the plan stage stores it (src/plan/needs.ts ScorePart). */
export interface ScorePartView {
  value: number | null
  weight: number | null
  /** weight × value: the parts' contributions add up to the score */
  contribution: number | null
}

/**
 * The parts of a need's score from its payload: `parts: {name: {value, weight, contribution}}`
 * (plain numbers are read as contributions).
 */
export function scoreParts(payload: unknown): Record<string, ScorePartView> {
  if (!isRecord(payload)) return {}
  const parts = payload['parts']
  if (!isRecord(parts)) return {}
  const out: Record<string, ScorePartView> = {}
  for (const [k, v] of Object.entries(parts)) {
    if (isRecord(v)) out[k] = { value: finite(v['value']), weight: finite(v['weight']), contribution: finite(v['contribution']) }
    else if (finite(v) !== null) out[k] = { value: null, weight: null, contribution: finite(v) }
  }
  return out
}

/** The plan's notes on a need (why a part is missing, what evidence is thin). */
export function needNotes(payload: unknown): string[] {
  if (!isRecord(payload) || !Array.isArray(payload['notes'])) return []
  return payload['notes'].filter((n): n is string => typeof n === 'string')
}
