/**
 * @module server/pages/reskilling
 * Reskilling: pathways from declining to rising skills (adjacency in postings), the people who could
 * take them as counts per role (never names; small counts hidden), and the quarterly forecast of
 * people to reskill per rising skill with its interval, drawn with uPlot from the JSON twin.
 * Reads the plan stage's outputs: kinds 'pathway', 'candidates', 'reskilling' and 'plan-run'.
 * JSON twin: /api/reskilling; tables: /api/reskilling/{pathways,candidates,forecast}[?format=csv].
 */
import type { Hono } from 'hono'
import { html } from 'hono/html'
import { planOutputs } from '../../db/dashboard.ts'
import type { CandidateGroup, Pathway } from '../../plan/pathways.ts'
import type { QuarterForecast } from '../../plan/reskilling-forecast.ts'
import { csv, minGroup, wantsCsv, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csvRows, dataTable, notice, page, stateMark, type Column, type Html } from '../layout.ts'
import { isRecord, parseJson } from '../payloads.ts'

export interface PathwayRow {
  from: string
  fromLabel: string
  fromState: string
  halfLifeMonths: number | null
  order: number
  to: string
  toLabel: string
  toState: string
  annualGrowth: number | null
  adjacency: number
  support: number
}

/** Counts of people are shown only from the minimum group size up; below it, null. */
export interface CandidateRow {
  role: string
  from: string
  fromLabel: string
  strong: number | null
  candidates: number | null
  to: string
  toLabel: string
  lacking: number | null
  unassessed: number | null
}

export interface ForecastRow {
  skill: string
  label: string
  quarter: number
  period: string
  reskill: number | null
  low: number | null
  high: number | null
  need: number | null
  supply: number | null
  headcountNow: number | null
  note: string | null
}

export interface ReskillingChart {
  level: number | null
  skills: { id: string; label: string; periods: string[]; reskill: (number | null)[]; low: (number | null)[]; high: (number | null)[] }[]
}

export interface ReskillingData {
  baseMonth: string | null
  level: number | null
  pathways: PathwayRow[]
  candidates: CandidateRow[]
  forecast: ForecastRow[]
  chart: ReskillingChart
  notes: string[]
}

function payloads<T>(deps: Deps, kind: string): Partial<T>[] {
  return planOutputs(deps.db, kind, 1_000_000)
    .map((r) => parseJson(r.payload_json))
    .filter(isRecord) as Partial<T>[]
}

const small = (n: unknown, min: number): number | null => (typeof n === 'number' && Number.isFinite(n) && n >= min ? n : null)

export function buildReskilling(deps: Deps): ReskillingData {
  const min = minGroup(deps)
  const pathways: PathwayRow[] = payloads<Pathway>(deps, 'pathway').flatMap((p) =>
    (p.targets ?? []).map((t, i) => ({
      from: String(p.skillId), fromLabel: String(p.label ?? p.skillId), fromState: String(p.state ?? ''), halfLifeMonths: p.halfLifeMonths ?? null,
      order: i + 1, to: t.id, toLabel: t.label, toState: t.state, annualGrowth: t.annualGrowth, adjacency: t.score, support: t.support,
    })),
  )
  const candidates: CandidateRow[] = payloads<CandidateGroup>(deps, 'candidates').flatMap((g) =>
    (g.targets ?? []).map((t) => {
      // a group resting on too few people hides every count, not just the small ones
      const groupOk = typeof g.strong === 'number' && g.strong >= min
      return {
        role: String(g.role), from: String(g.decliningSkill), fromLabel: String(g.decliningLabel ?? g.decliningSkill),
        strong: groupOk ? small(g.strong, min) : null, candidates: groupOk ? small(g.candidates, min) : null,
        to: t.id, toLabel: t.label, lacking: groupOk ? small(t.lacking, min) : null, unassessed: groupOk ? small(t.unassessed, min) : null,
      }
    }),
  )
  const forecast: ForecastRow[] = payloads<QuarterForecast>(deps, 'reskilling')
    .map((q): ForecastRow => {
      const ok = typeof q.headcountNow === 'number' && q.headcountNow >= min
      return {
        skill: String(q.skillId), label: String(q.label ?? q.skillId), quarter: Number(q.quarter), period: String(q.period ?? q.quarter),
        reskill: ok ? (q.reskill ?? null) : null, low: ok ? (q.low ?? null) : null, high: ok ? (q.high ?? null) : null,
        need: ok ? (q.need ?? null) : null, supply: ok ? (q.supply ?? null) : null, headcountNow: ok ? (q.headcountNow ?? null) : null,
        note: ok ? null : `fewer than ${min} people in the roles concerned: hidden`,
      }
    })
    .sort((a, b) => a.skill.localeCompare(b.skill) || a.quarter - b.quarter)
  const run = payloads<{ baseMonth: string; assumptions: { reskilling?: { interval?: number } } }>(deps, 'plan-run')[0]
  const level = typeof run?.assumptions?.reskilling?.interval === 'number' ? run.assumptions.reskilling.interval : null
  const bySkill = new Map<string, ForecastRow[]>()
  for (const r of forecast) {
    if (r.reskill === null) continue
    if (!bySkill.has(r.skill)) bySkill.set(r.skill, [])
    bySkill.get(r.skill)!.push(r)
  }
  const total = (rows: ForecastRow[]) => rows.reduce((a, r) => a + (r.reskill ?? 0), 0)
  const chart: ReskillingChart = {
    level,
    skills: [...bySkill.values()]
      .sort((a, b) => total(b) - total(a) || a[0]!.label.localeCompare(b[0]!.label))
      .map((rows) => ({ id: rows[0]!.skill, label: rows[0]!.label, periods: rows.map((r) => r.period), reskill: rows.map((r) => r.reskill), low: rows.map((r) => r.low), high: rows.map((r) => r.high) })),
  }
  const notes: string[] = []
  if (!run) notes.push('The plan has not been computed yet: run `tides run plan`.')
  else {
    if (pathways.length === 0) notes.push('No pathways: no declining skill has a rising skill adjacent to it in postings.')
    if (forecast.length === 0) notes.push('No reskilling forecast: no rising skill is required by a role with people in it.')
  }
  return { baseMonth: typeof run?.baseMonth === 'string' ? run.baseMonth : null, level, pathways, candidates, forecast, chart, notes }
}

const hiddenOr = (n: number | null, min: number, digits = 0) => (n === null ? `hidden (under ${min})` : f.num(n, digits))

const PATHWAY_COLUMNS: Column<PathwayRow>[] = [
  { key: 'from', label: 'From (losing demand)', value: (r) => r.from, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.from)}">${r.fromLabel}</a> ${stateMark(r.fromState)}${r.halfLifeMonths !== null ? html`<br><small>half-life ${f.months(r.halfLifeMonths)}</small>` : ''}` },
  { key: 'fromLabel', label: 'From label', value: (r) => r.fromLabel, csvOnly: true },
  { key: 'halfLifeMonths', label: 'Half-life', value: (r) => r.halfLifeMonths, csvOnly: true },
  { key: 'order', label: 'Choice', numeric: true, value: (r) => r.order },
  { key: 'to', label: 'To (gaining demand)', value: (r) => r.to, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.to)}">${r.toLabel}</a> ${stateMark(r.toState)}<br><small>${f.growth(r.annualGrowth)}</small>` },
  { key: 'toLabel', label: 'To label', value: (r) => r.toLabel, csvOnly: true },
  { key: 'adjacency', label: 'Adjacency in postings', numeric: true, value: (r) => r.adjacency, cell: (r) => f.num(r.adjacency, 2) },
  { key: 'support', label: 'Postings with both', numeric: true, value: (r) => r.support },
]

function candidateColumns(min: number): Column<CandidateRow>[] {
  return [
    { key: 'role', label: 'Role', value: (r) => r.role },
    { key: 'from', label: 'Strong in (losing demand)', value: (r) => r.from, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.from)}">${r.fromLabel}</a>` },
    { key: 'strong', label: 'People strong in it', numeric: true, value: (r) => r.strong, cell: (r) => hiddenOr(r.strong, min) },
    { key: 'candidates', label: 'Of whom lack a rising skill', numeric: true, value: (r) => r.candidates, cell: (r) => hiddenOr(r.candidates, min) },
    { key: 'to', label: 'Rising skill', value: (r) => r.to, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.to)}">${r.toLabel}</a>` },
    { key: 'lacking', label: 'Lacking it', numeric: true, value: (r) => r.lacking, cell: (r) => hiddenOr(r.lacking, min) },
    { key: 'unassessed', label: 'Not assessed in it', numeric: true, value: (r) => r.unassessed, cell: (r) => hiddenOr(r.unassessed, min) },
  ]
}

const FORECAST_COLUMNS: Column<ForecastRow>[] = [
  { key: 'skill', label: 'Skill', value: (r) => r.skill, cell: (r) => html`<a href="/skills/${encodeURIComponent(r.skill)}">${r.label}</a>` },
  { key: 'label', label: 'Label', value: (r) => r.label, csvOnly: true },
  { key: 'period', label: 'Quarter', value: (r) => r.period },
  { key: 'reskill', label: 'People to reskill (median)', numeric: true, value: (r) => r.reskill, cell: (r) => (r.note ? r.note : f.num(r.reskill)) },
  { key: 'low', label: 'Interval low', numeric: true, value: (r) => r.low, cell: (r) => f.num(r.low) },
  { key: 'high', label: 'Interval high', numeric: true, value: (r) => r.high, cell: (r) => f.num(r.high) },
  // expected counts of people: shown to the whole person (the CSV keeps them as computed), so a
  // column does not mix 782.0, 794 and 113.3
  { key: 'need', label: 'Needing it', numeric: true, value: (r) => r.need, cell: (r) => f.num(r.need, 0) },
  { key: 'supply', label: 'Meeting it', numeric: true, value: (r) => r.supply, cell: (r) => f.num(r.supply, 0) },
  { key: 'headcountNow', label: 'Headcount now', numeric: true, value: (r) => r.headcountNow, cell: (r) => f.num(r.headcountNow) },
]

export const RESKILLING_TABLES = {
  pathways: (d: ReskillingData) => ({ rows: d.pathways as unknown[], columns: PATHWAY_COLUMNS as Column<unknown>[] }),
  candidates: (d: ReskillingData, min: number) => ({ rows: d.candidates as unknown[], columns: candidateColumns(min) as Column<unknown>[] }),
  forecast: (d: ReskillingData) => ({ rows: d.forecast as unknown[], columns: FORECAST_COLUMNS as Column<unknown>[] }),
} as const

export function renderReskilling(c: Ctx, d: ReskillingData, min: number): Html {
  const level = d.level !== null ? `${Math.round(d.level * 100)}%` : 'the plan’s'
  const body = html`${d.notes.map((n) => notice('warn', n))}
<p>Quarters after ${d.baseMonth ? f.month(d.baseMonth) : 'the latest data'}. Counts are of people, in aggregate; groups under ${min} are hidden.</p>
<section aria-labelledby="fc-h"><h2 id="fc-h">People to reskill per quarter</h2>
<figure class="chart"><div id="reskilling-chart" class="chart-box" data-src="/api/reskilling/chart" role="img" aria-label="Chart of the people expected to need reskilling per quarter for one skill, with its interval; the numbers are in the table below."></div>
<figcaption>Line: median of simulated paths; shaded: the central ${level} interval. Choose the skill above the chart.</figcaption></figure>
${dataTable({ id: 'forecast', caption: 'Quarterly reskilling forecast', ...RESKILLING_TABLES.forecast(d), csv: '/api/reskilling/forecast?format=csv', empty: 'No forecast yet.' })}
</section>
<section aria-labelledby="pw-h"><h2 id="pw-h">Pathways from skills losing demand to skills gaining it</h2>
${dataTable({ id: 'pathways', caption: 'Pathways (adjacency of skills in postings)', ...RESKILLING_TABLES.pathways(d), csv: '/api/reskilling/pathways?format=csv', empty: 'No pathways yet.' })}
</section>
<section aria-labelledby="cand-h"><h2 id="cand-h">Who could take them, per role</h2>
${dataTable({ id: 'candidates', caption: 'Reskilling candidates (counts only)', ...RESKILLING_TABLES.candidates(d, min), csv: '/api/reskilling/candidates?format=csv', empty: 'No candidates: nobody is assessed as strong in a declining skill, or abilities are not estimated yet.' })}
</section>`
  return page({ title: 'Reskilling', active: 'reskilling', session: c.get('session'), path: c.req.path, body, charts: true, scripts: ['charts.js'], api: '/api/reskilling' })
}

export function mountReskilling(app: Hono<Env>, deps: Deps): void {
  app.get('/reskilling', (c) => c.html(renderReskilling(c, buildReskilling(deps), minGroup(deps))))
  app.get('/api/reskilling', (c) => c.json(buildReskilling(deps)))
  app.get('/api/reskilling/chart', (c) => c.json(buildReskilling(deps).chart))
  app.get('/api/reskilling/:table', (c) => {
    const name = c.req.param('table')
    if (!(name in RESKILLING_TABLES)) return c.json({ error: `no table "${name}" (tables: ${Object.keys(RESKILLING_TABLES).join(', ')}, chart)` }, 404)
    const t = RESKILLING_TABLES[name as keyof typeof RESKILLING_TABLES](buildReskilling(deps), minGroup(deps))
    const rows = csvRows(t.rows, t.columns)
    return wantsCsv(c) ? csv(c, `reskilling-${name}`, rows, t.columns.map((x) => x.key)) : c.json(rows)
  })
}
