/**
 * @module server/pages/reskilling
 * Reskilling pathways (from a declining skill to a rising one, with how many people could move) and
 * the quarterly reskilling forecast with its interval, drawn with uPlot from the JSON twin.
 * JSON twin: /api/reskilling; tables: /api/reskilling/pathways, /api/reskilling/forecast (?format=csv).
 */
import type { Hono } from 'hono'
import { html } from 'hono/html'
import { planOutputs, type PlanOutputRow } from '../../db/dashboard.ts'
import { csv, minGroup, wantsCsv, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csvRows, dataTable, notice, page, stateMark, type Column, type Html } from '../layout.ts'
import { isRecord, parseJson } from '../payloads.ts'

export const PATHWAY_KINDS = ['pathways', 'pathway', 'reskilling-pathways'] as const
export const FORECAST_KINDS = ['reskilling-forecast', 'reskilling', 'forecast'] as const

export interface Pathway {
  rank: number | null
  fromId: string
  fromLabel: string
  fromState: string | null
  toId: string
  toLabel: string
  toState: string | null
  similarity: number | null
  people: number | null
  peopleNote: string | null
  courses: string[]
  detail: string
}

export interface ForecastPoint {
  quarter: string
  /** what the number counts (e.g. people to reskill), per the plan stage */
  label: string
  mean: number | null
  low: number | null
  high: number | null
}

export interface ReskillingData {
  pathways: Pathway[]
  forecast: ForecastPoint[]
  /** forecast points summed per quarter, for the chart */
  chart: { quarters: string[]; mean: (number | null)[]; low: (number | null)[]; high: (number | null)[]; level: number | null }
  notes: string[]
}

function firstKind(deps: Deps, kinds: readonly string[]): PlanOutputRow[] {
  for (const k of kinds) {
    const rows = planOutputs(deps.db, k, 100_000)
    if (rows.length) return rows
  }
  return []
}

const str = (o: Record<string, unknown>, ...keys: string[]): string | null => {
  for (const k of keys) {
    const v = o[k]
    if (typeof v === 'string') return v
    if (isRecord(v) && typeof v['id'] === 'string') return v['id']
  }
  return null
}
const num = (o: Record<string, unknown>, ...keys: string[]): number | null => {
  for (const k of keys) if (typeof o[k] === 'number' && Number.isFinite(o[k])) return o[k]
  return null
}

/** Reads one pathway payload; people counts under the minimum group size are hidden. */
export function readPathway(row: PlanOutputRow, min: number): Pathway | null {
  const p = parseJson(row.payload_json)
  if (!isRecord(p)) return null
  const from = isRecord(p['from']) ? p['from'] : {}
  const to = isRecord(p['to']) ? p['to'] : {}
  const fromId = str(p, 'fromId', 'from_skill', 'from') ?? str(from, 'id')
  const toId = str(p, 'toId', 'to_skill', 'to') ?? str(to, 'id')
  if (!fromId || !toId) return null
  const people = num(p, 'people', 'headcount', 'candidates')
  const courses = Array.isArray(p['courses']) ? p['courses'].filter((x): x is string => typeof x === 'string') : []
  return {
    rank: row.rank,
    fromId, fromLabel: str(p, 'fromLabel') ?? str(from, 'label') ?? fromId, fromState: str(p, 'fromState') ?? str(from, 'state'),
    toId, toLabel: str(p, 'toLabel') ?? str(to, 'label') ?? toId, toState: str(p, 'toState') ?? str(to, 'state'),
    similarity: num(p, 'similarity', 'overlap', 'adjacency'),
    people: people !== null && people < min ? null : people,
    peopleNote: people !== null && people < min ? `fewer than ${min}: hidden` : null,
    courses,
    detail: str(p, 'reason', 'detail', 'summary') ?? '',
  }
}

/** Reads forecast rows: one per quarter, or one per key with a `quarters` array inside. */
export function readForecastRows(rows: readonly PlanOutputRow[]): ForecastPoint[] {
  const out: ForecastPoint[] = []
  const push = (o: Record<string, unknown>, fallbackQuarter: string, label: string) => {
    const quarter = str(o, 'quarter', 'period') ?? fallbackQuarter
    out.push({ quarter, label, mean: num(o, 'mean', 'expected', 'value', 'people'), low: num(o, 'low', 'lo', 'lower', 'lo80', 'lo95'), high: num(o, 'high', 'hi', 'upper', 'hi80', 'hi95') })
  }
  for (const r of rows) {
    const p = parseJson(r.payload_json)
    if (!isRecord(p)) continue
    const label = str(p, 'label', 'what', 'role', 'skill') ?? r.key
    const list = p['quarters'] ?? p['series']
    if (Array.isArray(list)) for (const q of list) isRecord(q) && push(q, r.key, label)
    else push(p, r.key, label)
  }
  return out.sort((a, b) => a.quarter.localeCompare(b.quarter) || a.label.localeCompare(b.label))
}

export function buildReskilling(deps: Deps): ReskillingData {
  const min = minGroup(deps)
  const pathways = firstKind(deps, PATHWAY_KINDS).map((r) => readPathway(r, min)).filter((p): p is Pathway => p !== null)
  const forecast = readForecastRows(firstKind(deps, FORECAST_KINDS))
  const quarters = [...new Set(forecast.map((p) => p.quarter))].sort()
  const sum = (q: string, key: 'mean' | 'low' | 'high') => {
    const vals = forecast.filter((p) => p.quarter === q).map((p) => p[key])
    return vals.some((v) => v === null) || vals.length === 0 ? null : (vals as number[]).reduce((a, b) => a + b, 0)
  }
  const notes: string[] = []
  if (pathways.length === 0) notes.push('No reskilling pathways yet: run `tides run plan` (it needs fitted curves and role data).')
  if (forecast.length === 0) notes.push('No reskilling forecast yet: run `tides run plan`.')
  return {
    pathways,
    forecast,
    chart: { quarters, mean: quarters.map((q) => sum(q, 'mean')), low: quarters.map((q) => sum(q, 'low')), high: quarters.map((q) => sum(q, 'high')), level: null },
    notes,
  }
}

const PATHWAY_COLUMNS: Column<Pathway>[] = [
  { key: 'rank', label: 'Rank', numeric: true, value: (r) => r.rank },
  { key: 'from', label: 'From (declining)', value: (r) => r.fromId, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.fromId)}">${r.fromLabel}</a> ${stateMark(r.fromState)}` },
  { key: 'to', label: 'To (rising)', value: (r) => r.toId, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.toId)}">${r.toLabel}</a> ${stateMark(r.toState)}` },
  { key: 'similarity', label: 'Skill overlap', numeric: true, value: (r) => r.similarity, cell: (r) => f.num(r.similarity, 2) },
  { key: 'people', label: 'People who could move', numeric: true, value: (r) => r.people, cell: (r) => (r.peopleNote ? r.peopleNote : f.num(r.people, 0)) },
  { key: 'courses', label: 'Courses', value: (r) => r.courses.join('|') },
  { key: 'detail', label: 'Why', value: (r) => r.detail },
]

const FORECAST_COLUMNS: Column<ForecastPoint>[] = [
  { key: 'quarter', label: 'Quarter', value: (r) => r.quarter },
  { key: 'label', label: 'What', value: (r) => r.label },
  { key: 'mean', label: 'Expected', numeric: true, value: (r) => r.mean, cell: (r) => f.num(r.mean) },
  { key: 'low', label: 'Interval low', numeric: true, value: (r) => r.low, cell: (r) => f.num(r.low) },
  { key: 'high', label: 'Interval high', numeric: true, value: (r) => r.high, cell: (r) => f.num(r.high) },
]

export function renderReskilling(c: Ctx, d: ReskillingData): Html {
  const body = html`${d.notes.map((n) => notice('warn', n))}
<section aria-labelledby="fc-h"><h2 id="fc-h">Reskilling forecast by quarter</h2>
<figure class="chart"><div id="reskilling-chart" class="chart-box" data-src="/api/reskilling/chart" role="img" aria-label="Chart of the expected reskilling headcount per quarter with its interval; the numbers are in the table below."></div>
<figcaption>Line: expected headcount to reskill per quarter, summed over what the plan forecasts; shaded: the interval (ends added, so wider than a joint interval).</figcaption></figure>
${dataTable({ id: 'forecast', caption: 'Quarterly forecast', columns: FORECAST_COLUMNS, rows: d.forecast, csv: '/api/reskilling/forecast?format=csv', empty: 'No forecast yet.' })}
</section>
<section aria-labelledby="pw-h"><h2 id="pw-h">Pathways from declining to rising skills</h2>
${dataTable({ id: 'pathways', caption: 'Pathways', columns: PATHWAY_COLUMNS, rows: d.pathways, csv: '/api/reskilling/pathways?format=csv', empty: 'No pathways yet.' })}
</section>`
  return page({ title: 'Reskilling', active: 'reskilling', session: c.get('session'), path: c.req.path, body, charts: true, scripts: ['charts.js'], api: '/api/reskilling' })
}

export function mountReskilling(app: Hono<Env>, deps: Deps): void {
  app.get('/reskilling', (c) => c.html(renderReskilling(c, buildReskilling(deps))))
  app.get('/api/reskilling', (c) => c.json(buildReskilling(deps)))
  app.get('/api/reskilling/chart', (c) => c.json(buildReskilling(deps).chart))
  app.get('/api/reskilling/pathways', (c) => {
    const rows = csvRows(buildReskilling(deps).pathways, PATHWAY_COLUMNS)
    return wantsCsv(c) ? csv(c, 'reskilling-pathways', rows, PATHWAY_COLUMNS.map((x) => x.key)) : c.json(rows)
  })
  app.get('/api/reskilling/forecast', (c) => {
    const rows = csvRows(buildReskilling(deps).forecast, FORECAST_COLUMNS)
    return wantsCsv(c) ? csv(c, 'reskilling-forecast', rows, FORECAST_COLUMNS.map((x) => x.key)) : c.json(rows)
  })
}
