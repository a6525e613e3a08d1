/**
 * @module server/layout
 * The page shell (navigation, sign-in state, cautions), the state marker, and a generic data table
 * with its CSV link. Everything interpolated goes through hono/html, which escapes it.
 */
import { html } from 'hono/html'
import type { HtmlEscapedString } from 'hono/utils/html'
import { CSRF_FIELD, type Session } from './security.ts'

export type Html = HtmlEscapedString | Promise<HtmlEscapedString>

export const NAV = [
  { href: '/', key: 'overview', label: 'Needs overview' },
  { href: '/courses', key: 'courses', label: 'Courses' },
  { href: '/reskilling', key: 'reskilling', label: 'Reskilling' },
  { href: '/taxonomy', key: 'taxonomy', label: 'Term review' },
  { href: '/sources', key: 'sources', label: 'Sources and runs' },
] as const

export interface PageOptions {
  title: string
  active?: string
  session: Session | null
  /** path of this page, for the sign-in link's return target */
  path: string
  body: Html
  /** file names under /assets/ */
  scripts?: string[]
  /** add uPlot's script and stylesheet */
  charts?: boolean
  /** the JSON twin of this page */
  api?: string
}

/** The full HTML document around a page body. */
export function page(o: PageOptions): Html {
  return html`<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${o.title} · skill-tides</title>
<link rel="icon" href="/assets/icon.svg" type="image/svg+xml">
${o.charts ? html`<link rel="stylesheet" href="/assets/vendor/uPlot.min.css">` : ''}
<link rel="stylesheet" href="/assets/style.css">
${o.charts ? html`<script src="/assets/vendor/uPlot.iife.min.js" defer></script>` : ''}
${(o.scripts ?? []).map((s) => html`<script src="/assets/${s}" defer></script>`)}
</head>
<body>
<a class="skip" href="#main">Skip to content</a>
<header class="top">
  <a class="brand" href="/"><span aria-hidden="true" class="brand-mark">≈</span> skill-tides</a>
  <nav aria-label="Sections"><ul>
    ${NAV.map((n) => html`<li><a href="${n.href}"${n.key === o.active ? html` aria-current="page"` : ''}>${n.label}</a></li>`)}
  </ul></nav>
  <div class="who">${o.session
    ? html`<form method="post" action="/logout" class="inline"><input type="hidden" name="${CSRF_FIELD}" value="${o.session.csrf}"><span>Signed in for changes</span> <button type="submit">Sign out</button></form>`
    : html`<a href="/login?next=${encodeURIComponent(o.path)}">Sign in to make changes</a>`}</div>
</header>
<main id="main">
<h1>${o.title}</h1>
${o.body}
</main>
<footer class="cautions" role="note" aria-label="Cautions">
  <p><strong>Estimates, not facts.</strong> Every trend, half-life, forecast and coverage figure here is an estimate with uncertainty; intervals show how wide it is.</p>
  <p><strong>A person decides.</strong> Rankings and flags suggest where to look; they do not decide what to build, retire or whom to train.</p>
  <p><strong>People data.</strong> Workforce figures are shown only in aggregate, and groups below the configured minimum size are hidden. Handling assessment and role data is subject to local privacy and employment law.</p>
  ${o.api ? html`<p class="twin">This page as data: <a href="${o.api}">${o.api}</a></p>` : ''}
</footer>
</body>
</html>`
}

/** The hidden CSRF field for forms (empty when not signed in). */
export function csrfField(session: Session | null): Html {
  return session ? html`<input type="hidden" name="${CSRF_FIELD}" value="${session.csrf}">` : html``
}

const STATE_SHAPES: Record<string, string> = {
  emerging: '◆',
  rising: '▲',
  steady: '●',
  declining: '▼',
  fading: '▽',
  'insufficient-evidence': '◌',
}

/** A lifecycle state as a shape and a word (colour is a third, redundant cue). */
export function stateMark(state: string | null | undefined): Html {
  if (!state) return html`<span class="state state-none"><span aria-hidden="true">○</span> not fitted</span>`
  const known = state in STATE_SHAPES
  return html`<span class="state state-${known ? state : 'other'}"><span aria-hidden="true">${STATE_SHAPES[state] ?? '◇'}</span> ${state.replace(/-/g, ' ')}</span>`
}

export interface Column<R> {
  key: string
  label: string
  /** the cell as HTML (defaults to the CSV value as text) */
  cell?: (row: R) => Html | string | number
  /** the value written to CSV and JSON */
  value: (row: R) => unknown
  numeric?: boolean
  /** only in CSV/JSON, not in the HTML table */
  csvOnly?: boolean
}

/** Column definitions' values for CSV export. */
export function csvRows<R>(rows: readonly R[], columns: readonly Column<R>[]): Record<string, unknown>[] {
  return rows.map((r) => Object.fromEntries(columns.map((c) => [c.key, c.value(r)])))
}

export interface TableOptions<R> {
  id: string
  caption: string
  columns: readonly Column<R>[]
  rows: readonly R[]
  /** link to this table as CSV */
  csv?: string
  /** shown instead of an empty table */
  empty: Html | string
}

/** A semantic table with a caption, column headers and a CSV download link. */
export function dataTable<R>(o: TableOptions<R>): Html {
  const csvLink = o.csv ? html`<p class="download"><a href="${o.csv}" download>Download “${o.caption}” as CSV</a></p>` : ''
  const columns = o.columns.filter((c) => !c.csvOnly)
  if (o.rows.length === 0) return html`<section class="table-wrap" aria-labelledby="${o.id}-cap"><h3 id="${o.id}-cap">${o.caption}</h3><p class="empty">${o.empty}</p></section>`
  return html`<section class="table-wrap" aria-labelledby="${o.id}-cap">
<table id="${o.id}">
<caption id="${o.id}-cap">${o.caption}</caption>
<thead><tr>${columns.map((c) => html`<th scope="col"${c.numeric ? html` class="num"` : ''}>${c.label}</th>`)}</tr></thead>
<tbody>${o.rows.map(
    (r) =>
      html`<tr>${columns.map((c) => {
        const content = c.cell ? c.cell(r) : textOf(c.value(r))
        return html`<td${c.numeric ? html` class="num"` : ''}>${content}</td>`
      })}</tr>`,
  )}</tbody>
</table>${csvLink}</section>`
}

function textOf(v: unknown): string {
  if (v === null || v === undefined) return '–'
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '–'
  return typeof v === 'string' ? v : JSON.stringify(v)
}

/** A short notice box (for empty states and results). */
export function notice(kind: 'info' | 'warn' | 'ok', content: Html | string): Html {
  const word = kind === 'warn' ? 'Note' : kind === 'ok' ? 'Done' : 'Info'
  return html`<p class="notice notice-${kind}" role="status"><strong>${word}:</strong> ${content}</p>`
}
