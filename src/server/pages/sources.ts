/**
 * @module server/pages/sources
 * Sources and runs: each source's last run, counts, errors and next scheduled run; the latest runs
 * of every stage; the latest events with their webhook delivery status. Locations are shown without
 * credentials or query strings (a feed URL may carry a key).
 * JSON twin: /api/sources; tables: /api/runs, /api/events (?format=csv).
 */
import type { Hono } from 'hono'
import { html } from 'hono/html'
import { eventsWithDelivery, runFailures, sourcesWithCounts } from '../../db/dashboard.ts'
import { latestRuns, listRuns, type JobRun } from '../../db/runs.ts'
import { csv, intParam, wantsCsv, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csvRows, dataTable, page, type Column, type Html } from '../layout.ts'

export interface SourceView {
  id: string
  kind: string
  location: string
  schedule: string | null
  configured: boolean
  documents: number
  lastRun: { id: number; status: string; startedAt: string; endedAt: string | null; read: number; new: number; duplicate: number; rejected: number; error: string | null } | null
  failedRuns: number
  runs: number
  nextRun: string | null
}

export interface EventView {
  id: number
  type: string
  at: string
  summary: string
  delivery: 'no webhooks' | 'delivered' | 'pending' | 'failed' | 'partly failed'
  delivered: number
  pending: number
  failed: number
  lastError: string | null
}

export interface SourcesData {
  sources: SourceView[]
  runs: JobRun[]
  events: EventView[]
  webhooks: number
}

/**
 * A location without userinfo, query or fragment: `https://u:p@host/x?key=1` -> `https://host/x?…`.
 * @example redactLocation('https://a:b@example.test/feed?key=1') // => "https://example.test/feed?…"
 */
export function redactLocation(location: string): string {
  try {
    const u = new URL(location)
    if (u.protocol !== 'http:' && u.protocol !== 'https:') return location
    return `${u.protocol}//${u.host}${u.pathname}${u.search ? '?…' : ''}`
  } catch {
    return location
  }
}

function summarise(payloadJson: string): string {
  try {
    const p = JSON.parse(payloadJson) as unknown
    if (typeof p !== 'object' || p === null) return ''
    return Object.entries(p as Record<string, unknown>)
      .filter(([, v]) => v === null || ['string', 'number', 'boolean'].includes(typeof v))
      .slice(0, 6)
      .map(([k, v]) => `${k}=${String(v)}`)
      .join(', ')
  } catch {
    return ''
  }
}

export function buildSources(deps: Deps, runLimit = 100): SourcesData {
  const { db, config } = deps
  const latest = latestRuns(db).filter((r) => r.stage === 'ingest' && r.source_id)
  const fails = runFailures(db)
  const next = new Map(deps.nextRuns().map((n) => [n.name, n.next]))
  const stored = new Map(sourcesWithCounts(db).map((s) => [s.id, s]))
  const ids = [...new Set([...config.sources.map((s) => s.id), ...stored.keys()])].sort()
  const sources = ids.map((id): SourceView => {
    const cfg = config.sources.find((s) => s.id === id)
    const row = stored.get(id)
    const run = latest.find((r) => r.source_id === id)
    const fail = fails.find((x) => x.stage === 'ingest' && x.source_id === id)
    return {
      id, kind: cfg?.kind ?? row?.kind ?? '', location: redactLocation(cfg?.location ?? row?.location ?? ''), schedule: cfg?.schedule ?? row?.schedule ?? null,
      configured: Boolean(cfg), documents: row?.documents ?? 0,
      lastRun: run ? { id: run.id, status: run.status, startedAt: run.started_at, endedAt: run.ended_at, read: run.read, new: run.new, duplicate: run.duplicate, rejected: run.rejected, error: run.error } : null,
      failedRuns: fail?.failed ?? 0, runs: fail?.runs ?? 0, nextRun: next.get(`ingest:${id}`) ?? null,
    }
  })
  const events = eventsWithDelivery(db).map((e): EventView => {
    const total = e.delivered + e.pending + e.failed
    const delivery = total === 0 ? 'no webhooks' : e.failed === total ? 'failed' : e.failed > 0 ? 'partly failed' : e.pending > 0 ? 'pending' : 'delivered'
    return { id: e.id, type: e.type, at: e.created_at, summary: summarise(e.payload_json), delivery, delivered: e.delivered, pending: e.pending, failed: e.failed, lastError: e.last_error }
  })
  return { sources, runs: listRuns(db, runLimit), events, webhooks: config.webhooks.length }
}

const STATUS_SHAPE: Record<string, string> = { ok: '✓', failed: '✗', partial: '◐', running: '…', delivered: '✓', pending: '…', 'partly failed': '◐', 'no webhooks': '–' }

export function statusMark(status: string): Html {
  return html`<span class="status status-${status.replace(/\s+/g, '-')}"><span aria-hidden="true">${STATUS_SHAPE[status] ?? '•'}</span> ${status}</span>`
}

const SOURCE_COLUMNS: Column<SourceView>[] = [
  { key: 'id', label: 'Source', value: (r) => r.id, cell: (r) => html`<strong>${r.id}</strong><br><small>${r.kind}${r.configured ? '' : ' · not in config'}</small>` },
  { key: 'kind', label: 'Kind', value: (r) => r.kind, csvOnly: true },
  { key: 'location', label: 'Location', value: (r) => r.location },
  { key: 'documents', label: 'Documents', numeric: true, value: (r) => r.documents },
  { key: 'lastStatus', label: 'Last run', value: (r) => r.lastRun?.status ?? '', cell: (r) => (r.lastRun ? html`${statusMark(r.lastRun.status)}<br><small>${f.when(r.lastRun.endedAt ?? r.lastRun.startedAt)}</small>` : 'never') },
  { key: 'lastNew', label: 'Read / new / duplicate / rejected', numeric: true, value: (r) => r.lastRun?.new ?? null, cell: (r) => (r.lastRun ? `${r.lastRun.read} / ${r.lastRun.new} / ${r.lastRun.duplicate} / ${r.lastRun.rejected}` : '–') },
  { key: 'lastError', label: 'Error', value: (r) => r.lastRun?.error ?? '', cell: (r) => (r.lastRun?.error ? html`<span class="error-text">${r.lastRun.error}</span>` : '–') },
  { key: 'failedRuns', label: 'Failed runs (of all)', numeric: true, value: (r) => r.failedRuns, cell: (r) => `${r.failedRuns} of ${r.runs}` },
  { key: 'schedule', label: 'Schedule', value: (r) => r.schedule ?? '' },
  { key: 'nextRun', label: 'Next run', value: (r) => r.nextRun ?? '', cell: (r) => (r.nextRun ? f.when(r.nextRun) : r.schedule ? 'when `tides serve` runs' : 'on demand') },
]

export const RUN_COLUMNS: Column<JobRun>[] = [
  { key: 'id', label: 'Run', numeric: true, value: (r) => r.id },
  { key: 'stage', label: 'Stage', value: (r) => r.stage },
  { key: 'source', label: 'Source', value: (r) => r.source_id ?? '' },
  { key: 'trigger', label: 'Started by', value: (r) => r.trigger },
  { key: 'started', label: 'Started', value: (r) => r.started_at, cell: (r) => f.when(r.started_at) },
  { key: 'ended', label: 'Ended', value: (r) => r.ended_at ?? '', cell: (r) => f.when(r.ended_at) },
  { key: 'status', label: 'Status', value: (r) => r.status, cell: (r) => statusMark(r.status) },
  { key: 'read', label: 'Read', numeric: true, value: (r) => r.read },
  { key: 'new', label: 'New', numeric: true, value: (r) => r.new },
  { key: 'duplicate', label: 'Duplicates', numeric: true, value: (r) => r.duplicate },
  { key: 'rejected', label: 'Rejected', numeric: true, value: (r) => r.rejected },
  { key: 'error', label: 'Error', value: (r) => r.error ?? '' },
]

export const EVENT_COLUMNS: Column<EventView>[] = [
  { key: 'id', label: 'Event', numeric: true, value: (r) => r.id },
  { key: 'type', label: 'Type', value: (r) => r.type },
  { key: 'at', label: 'When', value: (r) => r.at, cell: (r) => f.when(r.at) },
  { key: 'summary', label: 'Payload', value: (r) => r.summary },
  { key: 'delivery', label: 'Webhook delivery', value: (r) => r.delivery, cell: (r) => html`${statusMark(r.delivery)}${r.delivered + r.pending + r.failed ? html`<br><small>${r.delivered} delivered, ${r.pending} pending, ${r.failed} failed</small>` : ''}` },
  { key: 'lastError', label: 'Last delivery error', value: (r) => r.lastError ?? '' },
]

export function renderSources(c: Ctx, d: SourcesData): Html {
  const body = html`<p>${d.sources.length} sources · ${d.webhooks} webhook endpoint${d.webhooks === 1 ? '' : 's'} configured.</p>
${dataTable({ id: 'sources', caption: 'Sources', columns: SOURCE_COLUMNS, rows: d.sources, csv: '/api/sources?format=csv', empty: 'No sources configured or imported yet: add `sources` to tides.config.json or run `tides import postings FILE`.' })}
${dataTable({ id: 'runs', caption: 'Latest runs', columns: RUN_COLUMNS, rows: d.runs, csv: '/api/runs?format=csv', empty: 'No runs yet: run `tides run all`.' })}
${dataTable({ id: 'events', caption: 'Latest events', columns: EVENT_COLUMNS, rows: d.events, csv: '/api/events?format=csv', empty: 'No events yet.' })}`
  return page({ title: 'Sources and runs', active: 'sources', session: c.get('session'), path: c.req.path, body, api: '/api/sources' })
}

export function mountSources(app: Hono<Env>, deps: Deps): void {
  app.get('/sources', (c) => c.html(renderSources(c, buildSources(deps))))
  app.get('/api/sources', (c) => {
    const d = buildSources(deps)
    return wantsCsv(c) ? csv(c, 'sources', csvRows(d.sources, SOURCE_COLUMNS), SOURCE_COLUMNS.map((x) => x.key)) : c.json(d)
  })
  app.get('/api/runs', (c) => {
    const runs = listRuns(deps.db, intParam(c.req.query('limit'), 100, 1, 10_000))
    return wantsCsv(c) ? csv(c, 'runs', csvRows(runs, RUN_COLUMNS), RUN_COLUMNS.map((x) => x.key)) : c.json(runs)
  })
  app.get('/api/events', (c) => {
    const events = buildSources(deps).events
    return wantsCsv(c) ? csv(c, 'events', csvRows(events, EVENT_COLUMNS), EVENT_COLUMNS.map((x) => x.key)) : c.json(events)
  })
}
