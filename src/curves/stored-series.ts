/**
 * @module curves/stored-series
 * The month series of a stored curve (fitted curve, combined index, forecast with its 80% and 95%
 * bands) kept as one binary column, `curves.series` (migration 10), instead of numbers in
 * `details_json`. Writing them as JSON text was most of the fit stage's write: at a million
 * postings the 20,000 curves' details were 138 MB, and turning about 5 million doubles into
 * decimal text, then handing those strings to SQLite, cost about 1.5 s more CPU per fit than this
 * column (measured on the 1M bench database, see DEVELOPERS.md). The values are the same doubles,
 * bit for bit.
 *
 * Layout, recorded in the details under `seriesLayout` so a reader never guesses:
 * `{ format: 'f64le', start, months, fitted, forecastMonths }`; the blob holds little-endian
 * float64 values: the fitted curve (`months` values, only when `fitted`), the combined index
 * (`months` values), then the forecast as five columns of `forecastMonths` values each (share,
 * lo80, hi80, lo95, hi95) for the months after the last one. A missing value is NaN (null in JSON).
 *
 * {@link storedDetails} gives readers the details in the JSON shape the fit wrote before this
 * column existed (`fitted` and `combined` as `{ start, values }`, `forecast` as points), so pages,
 * reports and the plan read old and new rows alike.
 */
import { ForecastBands, type ForecastPoint } from './forecast.ts'
import { isMonth, monthIndex, monthLabel } from './months.ts'

export interface SeriesLayout {
  format: 'f64le'
  /** first month of the fitted and combined series (YYYY-MM) */
  start: string
  months: number
  fitted: boolean
  forecastMonths: number
}

type Column = { months: readonly string[]; values: readonly (number | null)[] }

const BAND_KEYS = ['share', 'lo80', 'hi80', 'lo95', 'hi95'] as const

const BIG_ENDIAN = new Uint8Array(Float64Array.of(1).buffer)[7] !== 0x3f

function isColumn(x: unknown): x is Column {
  return typeof x === 'object' && x !== null && Array.isArray((x as Column).months) && Array.isArray((x as Column).values)
}

/** Month lists already checked to be consecutive (every skill of a run shares the run's list). */
const consecutiveLists = new WeakMap<readonly string[], boolean>()

/** true when the months are YYYY-MM strings one month apart (remembered per list). */
export function consecutiveMonths(months: readonly string[]): boolean {
  let known = consecutiveLists.get(months)
  if (known === undefined) {
    const first = isMonth(months[0] ?? '') ? monthIndex(months[0]!) : NaN
    known = months.length > 0 && months.every((month, i) => isMonth(month) && monthIndex(month) === first + i)
    consecutiveLists.set(months, known)
  }
  return known
}

/**
 * The binary series of a curve's details and their layout, or null when the details do not have
 * the shape this column stores (the combined index over consecutive months, a fitted curve over the
 * same months or none, forecast points for the months right after): such details keep their
 * series as JSON.
 *
 * @example
 * ```ts
 * encodeSeries(curve.details)?.layout // => { format: 'f64le', start: '2020-01', months: 60, fitted: true, forecastMonths: 12 }
 * ```
 */
export function encodeSeries(details: Record<string, unknown>): { layout: SeriesLayout; blob: Buffer } | null {
  const combined = details['combined']
  const fitted = details['fitted'] ?? null
  const forecast = details['forecast'] ?? []
  if (!isColumn(combined) || combined.months.length !== combined.values.length || !consecutiveMonths(combined.months)) return null
  if (fitted !== null && !(isColumn(fitted) && fitted.months === combined.months && fitted.values.length === combined.values.length)) return null
  const months = combined.months.length
  const first = monthIndex(combined.months[0]!)
  // the fit's columns (forecast.ts ForecastBands), or points as JSON has them
  const columns = forecast instanceof ForecastBands ? forecast : null
  if (columns ? columns.length > 0 && columns.firstMonth !== first + months : !Array.isArray(forecast)) return null
  const points = columns ? [] : (forecast as ForecastPoint[])
  for (let h = 0; h < points.length; h++) {
    const point = points[h]
    if (typeof point !== 'object' || point === null || point.month !== monthLabel(first + months + h) || point.monthsAhead !== h + 1) return null
  }
  const horizon = columns ? columns.length : points.length
  const size = (fitted ? months : 0) + months + BAND_KEYS.length * horizon
  const values = new Float64Array(size)
  let at = 0
  const put = (x: number | null | undefined) => (values[at++] = typeof x === 'number' ? x : Number.NaN)
  if (fitted) for (const x of (fitted as Column).values) put(x)
  for (const x of combined.values) put(x)
  if (columns) {
    for (const key of BAND_KEYS) {
      values.set(columns[key], at)
      at += horizon
    }
  } else for (const key of BAND_KEYS) for (const point of points) put(point[key])
  const blob = Buffer.from(values.buffer, values.byteOffset, values.byteLength)
  // a Float64Array holds the machine's byte order; the column is little-endian everywhere
  if (BIG_ENDIAN) blob.swap64()
  return { layout: { format: 'f64le', start: combined.months[0]!, months, fitted: fitted !== null, forecastMonths: horizon }, blob }
}

function readLayout(x: unknown): SeriesLayout | null {
  if (typeof x !== 'object' || x === null) return null
  const l = x as Record<string, unknown>
  const count = (v: unknown) => typeof v === 'number' && Number.isInteger(v) && v >= 0 && v <= 100_000
  if (l['format'] !== 'f64le' || typeof l['start'] !== 'string' || !isMonth(l['start']) || !count(l['months']) || !count(l['forecastMonths']) || typeof l['fitted'] !== 'boolean') return null
  return l as unknown as SeriesLayout
}

const jsonNumber = (x: number): number | null => (Number.isFinite(x) ? x : null)

/**
 * A stored curve's details with its binary series put back in the JSON shape: `fitted` and
 * `combined` as `{ start, values }`, `forecast` as points `{ month, monthsAhead, share, lo80, hi80,
 * lo95, hi95, low, high }` (low/high: the 95% band under the names the plan reads), NaN as null.
 * Details without a layout (rows written before migration 10) are returned as they are; a blob that
 * does not match its layout leaves the series out (shown as not available), never fails.
 *
 * @example
 * ```ts
 * storedDetails(JSON.parse(row.details_json), row.series).forecast[0].lo95
 * ```
 */
export function storedDetails(details: Record<string, unknown>, blob: Uint8Array | null | undefined): Record<string, unknown> {
  if (details['seriesLayout'] === undefined) return details
  const { seriesLayout, ...rest } = details
  const layout = readLayout(seriesLayout)
  if (!layout || !blob) return rest
  const size = (layout.fitted ? layout.months : 0) + layout.months + BAND_KEYS.length * layout.forecastMonths
  if (blob.byteLength !== size * 8) return rest
  const view = new DataView(blob.buffer, blob.byteOffset, blob.byteLength)
  let at = 0
  const take = (n: number): number[] => {
    const out = new Array<number>(n)
    for (let i = 0; i < n; i++) out[i] = view.getFloat64(8 * at++, true)
    return out
  }
  const nullable = (xs: number[]) => xs.map(jsonNumber)
  const fitted = layout.fitted ? { start: layout.start, values: nullable(take(layout.months)) } : null
  const combined = { start: layout.start, values: nullable(take(layout.months)) }
  const bands = BAND_KEYS.map(() => take(layout.forecastMonths))
  const end = monthIndex(layout.start) + layout.months
  const forecast = Array.from({ length: layout.forecastMonths }, (_, h) => {
    const [share, lo80, hi80, lo95, hi95] = bands.map((band) => jsonNumber(band[h]!))
    return { month: monthLabel(end + h), monthsAhead: h + 1, share, lo80, hi80, lo95, hi95, low: lo95, high: hi95 }
  })
  return { ...rest, fitted, combined, forecast }
}

/**
 * The details of a stored curve row, parsed and with its binary series in place; malformed JSON
 * reads as `{}` (absent), never as an error.
 */
export function curveRowDetails(row: { details_json: string | null | undefined; series?: Uint8Array | null }): Record<string, unknown> {
  let parsed: unknown
  try {
    parsed = JSON.parse(row.details_json || '{}')
  } catch {
    return {}
  }
  if (typeof parsed !== 'object' || parsed === null || Array.isArray(parsed)) return {}
  return storedDetails(parsed as Record<string, unknown>, row.series)
}
