/**
 * @module server/pages/taxonomy
 * Review of candidate terms the mapper found rising in postings but not in the taxonomy: trend,
 * examples, and three decisions (a new concept, an altLabel of an existing concept, or dismiss),
 * each made by the taxonomy stage's own functions, which emit `taxonomy.changed` so the documents
 * are re-mapped and the curves refitted. The page shows how far that ripple has got.
 * JSON twin: /api/taxonomy; progress: /api/taxonomy/progress; write: POST /taxonomy/decide.
 */
import type { Hono, MiddlewareHandler } from 'hono'
import { html } from 'hono/html'
import {
  candidateByTerm, candidateCounts, candidates, conceptById, conceptChoices, conceptsByLabel, consumerCursor, firstRunSince, latestEventOf, type CandidateRow,
} from '../../db/dashboard.ts'
import { candidatesComputed } from '../../db/taxonomy.ts'
import { csv, intParam, wantsCsv, withQuery, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csrfField, csvRows, dataTable, notice, page, type Column, type Html } from '../layout.ts'
import { isRecord, parseJson } from '../payloads.ts'
import { sparkline } from '../sparkline.ts'
import { readWrite, writeResult, type WriteOutcome } from './write.ts'

export interface CandidateView {
  term: string
  score: number
  recentDf: number
  earlierDf: number
  trend: (number | null)[]
  examples: string[]
  status: string
  decision: unknown
  updatedAt: string
}

export interface StepProgress {
  step: 're-map' | 'refit'
  status: 'waiting' | 'running' | 'done' | 'failed'
  runId: number | null
  at: string | null
}

export interface Progress {
  event: { id: number; at: string; payload: unknown } | null
  steps: StepProgress[]
  done: boolean
}

export interface TaxonomyData {
  status: string
  counts: Record<string, number>
  candidates: CandidateView[]
  progress: Progress
  notes: string[]
}

/** Reads the trend as numbers, or as `[{month, df|count|n}]`. */
/**
 * Reads the trend as numbers, or as `[{month, df, docs}]` (the taxonomy stage's form: documents
 * with the term of all documents that month, read as a share), or `[{month, share|count|n}]`.
 */
export function readTrend(json: string): (number | null)[] {
  const t = parseJson(json)
  if (!Array.isArray(t)) return []
  return t.map((x) => {
    if (typeof x === 'number' && Number.isFinite(x)) return x
    if (!isRecord(x)) return null
    if (typeof x['df'] === 'number' && typeof x['docs'] === 'number') return x['docs'] > 0 ? x['df'] / x['docs'] : null
    for (const k of ['share', 'df', 'count', 'n', 'value']) if (typeof x[k] === 'number') return x[k] as number
    return null
  })
}

/** Reads examples as strings, or as `[{title, text|snippet}]` joined to one line each. */
export function readExamples(json: string): string[] {
  const e = parseJson(json)
  if (!Array.isArray(e)) return []
  return e
    .map((x) => {
      if (typeof x === 'string') return x
      if (isRecord(x)) return [x['title'] ?? x['month'], x['snippet'] ?? x['text'] ?? x['context']].filter((v) => typeof v === 'string').join(': ')
      return ''
    })
    .filter(Boolean)
    .slice(0, 5)
}

function toView(r: CandidateRow): CandidateView {
  return {
    term: r.term, score: r.score, recentDf: r.recent_df, earlierDf: r.earlier_df, trend: readTrend(r.trend_json), examples: readExamples(r.examples_json),
    status: r.status, decision: parseJson(r.decision_json), updatedAt: r.updated_at,
  }
}

/** How far the latest taxonomy change has rippled: re-map (map stage) and refit (fit stage). */
export function buildProgress(deps: Deps): Progress {
  const ev = latestEventOf(deps.db, 'taxonomy.changed')
  if (!ev) return { event: null, steps: [], done: true }
  const step = (name: StepProgress['step'], stage: string, since: string): StepProgress => {
    const run = firstRunSince(deps.db, stage, since)
    if (!run) return { step: name, status: 'waiting', runId: null, at: null }
    const status = run.status === 'running' ? 'running' : run.status === 'failed' ? 'failed' : 'done'
    return { step: name, status, runId: run.id, at: run.ended_at ?? run.started_at }
  }
  // the map stage has handled the event once its cursor passed it (even if its run is not found)
  const remap = step('re-map', 'map', ev.created_at)
  if (remap.status === 'waiting' && consumerCursor(deps.db, 'stage:map') >= ev.id) remap.status = 'done'
  const refit: StepProgress =
    remap.status === 'done' ? step('refit', 'fit', ev.created_at) : { step: 'refit', status: 'waiting', runId: null, at: null }
  const steps = [remap, refit]
  return { event: { id: ev.id, at: ev.created_at, payload: parseJson(ev.payload_json) }, steps, done: steps.every((s) => s.status === 'done') }
}

export function buildTaxonomy(deps: Deps, status: string): TaxonomyData {
  const rows = candidates(deps.db, status === 'all' ? undefined : status)
  const counts = candidateCounts(deps.db)
  const notes: string[] = []
  if (Object.keys(counts).length === 0) notes.push('No candidate terms yet: they appear after `tides run map` finds frequent unknown phrases.')
  const computed = candidatesComputed(deps.db)
  if (computed) notes.push(`Candidate list computed ${computed.at}; a map run recomputes it every ${deps.config.taxonomy.candidates.refreshHours} h or after a taxonomy change.`)
  return { status, counts, candidates: rows.map(toView), progress: buildProgress(deps), notes }
}

const COLUMNS: Column<CandidateView>[] = [
  { key: 'term', label: 'Term', value: (r) => r.term, cell: (r) => html`<strong class="term">${r.term}</strong>` },
  { key: 'trend', label: 'Trend', value: (r) => r.trend.join('|'), cell: (r) => sparkline(r.trend, r.term) },
  { key: 'recentDf', label: 'Postings recently (before)', numeric: true, value: (r) => r.recentDf, cell: (r) => `${r.recentDf} (${r.earlierDf})` },
  { key: 'earlierDf', label: 'Postings before', value: (r) => r.earlierDf, csvOnly: true },
  { key: 'score', label: 'Score', numeric: true, value: (r) => r.score, cell: (r) => f.num(r.score, 2) },
  {
    key: 'examples', label: 'Examples', value: (r) => r.examples.join(' | '),
    cell: (r) => (r.examples.length ? html`<ul class="examples">${r.examples.map((e) => html`<li>${e}</li>`)}</ul>` : '–'),
  },
  { key: 'status', label: 'Status', value: (r) => r.status },
]

function decideForms(c: Ctx, r: CandidateView): Html {
  if (r.status !== 'open') return html`<span class="muted">${r.status}</span>`
  const session = c.get('session')
  if (!session) return html`<a href="/login?next=/taxonomy">Sign in to decide</a>`
  const slug = r.term.replace(/[^\w-]/g, '_')
  return html`<div class="decide">
<form method="post" action="/taxonomy/decide">${csrfField(session)}<input type="hidden" name="term" value="${r.term}"><input type="hidden" name="action" value="new">
<label for="t-${slug}">type</label> <select id="t-${slug}" name="type"><option>hard</option><option>soft</option></select>
<button type="submit" data-action="new">Accept as new skill</button></form>
<form method="post" action="/taxonomy/decide">${csrfField(session)}<input type="hidden" name="term" value="${r.term}"><input type="hidden" name="action" value="alt">
<label for="c-${slug}">altLabel of</label> <input id="c-${slug}" name="concept" list="concept-ids" required placeholder="skill id or label" autocomplete="off" data-suggest="/api/concepts">
<button type="submit" data-action="alt">Add as altLabel</button></form>
<form method="post" action="/taxonomy/decide">${csrfField(session)}<input type="hidden" name="term" value="${r.term}"><input type="hidden" name="action" value="dismiss">
<button type="submit" data-action="dismiss">Dismiss</button></form></div>`
}

function progressBox(p: Progress): Html {
  if (!p.event) return html`<p id="progress" class="progress" aria-live="polite">No taxonomy change yet.</p>`
  return html`<div id="progress" class="progress" aria-live="polite" data-src="/api/taxonomy/progress" data-done="${p.done ? '1' : '0'}">
<p>Latest change: event #${p.event.id}, ${f.when(p.event.at)}.</p>
<ol>${p.steps.map((s) => html`<li data-step="${s.step}"><span class="step-status step-${s.status}">${s.status === 'done' ? '✓' : s.status === 'failed' ? '✗' : s.status === 'running' ? '…' : '○'} ${s.status}</span> ${s.step}${s.runId ? html` (run #${s.runId}, ${f.when(s.at)})` : ''}</li>`)}</ol></div>`
}

export function renderTaxonomy(c: Ctx, d: TaxonomyData, concepts: { id: string; label: string }[], outcome?: WriteOutcome): Html {
  const columns: Column<CandidateView>[] = [...COLUMNS, { key: 'decide', label: 'Decision', value: () => '', cell: (r) => decideForms(c, r) }]
  const tabs = ['open', 'accepted', 'dismissed', 'all']
  const body = html`${outcome ? writeResult(outcome) : ''}${d.notes.map((n) => notice('warn', n))}
<p>${d.counts['open'] ?? 0} open · ${d.counts['accepted'] ?? 0} accepted · ${d.counts['dismissed'] ?? 0} dismissed. Accepting a term changes the taxonomy: past documents are re-mapped and the curves refitted.</p>
<section aria-labelledby="prog-h"><h2 id="prog-h">Progress of the latest change</h2>${progressBox(d.progress)}</section>
<nav class="tabs" aria-label="Candidate status">${tabs.map((t) => html`<a href="/taxonomy?status=${t}"${t === d.status ? html` aria-current="page"` : ''}>${t}</a> `)}</nav>
<datalist id="concept-ids">${concepts.map((x) => html`<option value="${x.id}">${x.label}</option>`)}</datalist>
${dataTable({ id: 'candidates', caption: `Candidate terms (${d.status})`, columns, rows: d.candidates, csv: withQuery(c, { format: 'csv' }, '/api/taxonomy'), empty: 'No candidate terms with this status.' })}`
  return page({ title: 'Term review', active: 'taxonomy', session: c.get('session'), path: c.req.path, body, scripts: ['progress.js', 'forms.js', 'concepts.js'], api: withQuery(c, {}, '/api/taxonomy') })
}

/** Carries out one decision through the taxonomy stage's functions. */
export function decide(deps: Deps, input: Record<string, unknown>, actor: string): WriteOutcome {
  const term = typeof input['term'] === 'string' ? input['term'] : ''
  const action = input['action']
  const cand = term ? candidateByTerm(deps.db, term) : undefined
  if (!cand) return { status: 404, message: `no candidate term "${term}"` }
  if (cand.status !== 'open') return { status: 409, message: `“${term}” was already ${cand.status}` }
  try {
    return carryOut(deps, term, action, input, actor)
  } catch (err) {
    if (err instanceof Error && err.name === 'DecisionError') return { status: 400, message: err.message }
    throw err
  }
}

function carryOut(deps: Deps, term: string, action: unknown, input: Record<string, unknown>, actor: string): WriteOutcome {
  const a = deps.actions
  let outcome: unknown
  if (action === 'new') {
    const type = input['type'] === 'soft' ? 'soft' : input['type'] === 'hard' || input['type'] === undefined ? 'hard' : null
    if (!type) return { status: 400, message: 'type: hard or soft' }
    if (!a.acceptAsConcept) return { status: 501, message: 'accepting terms is not built in this version' }
    const label = typeof input['label'] === 'string' && input['label'].trim() ? input['label'].trim() : term
    outcome = a.acceptAsConcept(deps.db, term, { label, type, ...(typeof input['id'] === 'string' && input['id'] ? { id: input['id'] } : {}) }, actor)
  } else if (action === 'alt') {
    const given = typeof input['concept'] === 'string' ? input['concept'].trim() : ''
    if (!given) return { status: 400, message: 'concept: choose the skill this term is another name for' }
    // an id, or else a prefLabel that names exactly one skill
    const byLabel = conceptById(deps.db, given) ? [] : conceptsByLabel(deps.db, given)
    if (!conceptById(deps.db, given) && byLabel.length !== 1) {
      return { status: 400, message: byLabel.length > 1 ? `concept: "${given}" names several skills; give the id` : `concept: no skill with id or label "${given}"` }
    }
    const concept = byLabel[0]?.id ?? given
    input['concept'] = concept
    if (!a.acceptAsAltLabel) return { status: 501, message: 'accepting terms is not built in this version' }
    outcome = a.acceptAsAltLabel(deps.db, term, concept, actor)
  } else if (action === 'dismiss') {
    if (!a.dismissCandidate) return { status: 501, message: 'dismissing terms is not built in this version' }
    outcome = a.dismissCandidate(deps.db, term, actor)
  } else {
    return { status: 400, message: 'action: new, alt or dismiss' }
  }
  deps.afterWrite()
  const affected = isRecord(outcome) && typeof outcome['affected'] === 'number' ? outcome['affected'] : null
  if (action === 'dismiss') return { status: 200, message: `“${term}” dismissed; it will not be proposed again` }
  const verb = action === 'alt' ? `added as altLabel of ${String(input['concept'])}` : 'accepted as a new skill'
  return { status: 200, message: `“${term}” ${verb}; ${affected === null ? 'documents are' : `${affected} document${affected === 1 ? ' is' : 's are'}`} re-mapped next, then curves refitted` }
}

export function mountTaxonomy(app: Hono<Env>, deps: Deps, guard: MiddlewareHandler<Env>): void {
  const status = (c: Ctx) => {
    const s = c.req.query('status') ?? 'open'
    return ['open', 'accepted', 'dismissed', 'all'].includes(s) ? s : 'open'
  }
  app.get('/taxonomy', (c) => {
    const outcome: WriteOutcome | undefined = c.req.query('decided') === '1' ? { status: 200, message: 'Decision saved; re-mapping and refitting follow (progress below).' } : undefined
    return c.html(renderTaxonomy(c, buildTaxonomy(deps, status(c)), conceptChoices(deps.db), outcome))
  })
  app.get('/api/taxonomy', (c) => {
    const d = buildTaxonomy(deps, status(c))
    return wantsCsv(c) ? csv(c, 'candidate-terms', csvRows(d.candidates, COLUMNS), COLUMNS.map((x) => x.key)) : c.json(d)
  })
  app.get('/api/taxonomy/progress', (c) => c.json(buildProgress(deps)))
  app.get('/api/concepts', (c) => {
    const rows = conceptChoices(deps.db, (c.req.query('q') ?? '').slice(0, 200), intParam(c.req.query('limit'), 50, 1, 500))
    return wantsCsv(c) ? csv(c, 'skills', rows, ['id', 'label']) : c.json(rows)
  })
  const handler = async (c: Ctx) => {
    const outcome = decide(deps, await readWrite(c), c.get('actor'))
    if (c.req.path.startsWith('/api/')) return c.json(outcome.status === 200 ? { ok: true, message: outcome.message } : { error: outcome.message }, outcome.status)
    if (outcome.status === 200) return c.redirect('/taxonomy?decided=1', 303)
    return c.html(renderTaxonomy(c, buildTaxonomy(deps, 'open'), conceptChoices(deps.db), outcome), outcome.status)
  }
  app.post('/taxonomy/decide', guard, handler)
  app.post('/api/taxonomy/decide', guard, handler)
}
