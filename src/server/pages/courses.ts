/**
 * @module server/pages/courses
 * Courses with the plan's flags and their reasons, filterable by owner and flag, with a snooze form
 * (a note and a date) that calls the plan stage's snoozeCourseFlag. JSON twin: /api/courses;
 * CSV: /api/courses?format=csv; write: POST /courses/:id/snooze (form) or /api/courses/:id/snooze (JSON).
 */
import type { Hono, MiddlewareHandler } from 'hono'
import { html } from 'hono/html'
import { allCourses, courseById, planOutputs } from '../../db/dashboard.ts'
import type { CourseFlag } from '../../plan/course-flags.ts'
import { SnoozeError, activeSnoozes } from '../../plan/snooze.ts'
import { csv, wantsCsv, withQuery, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csrfField, csvRows, dataTable, notice, page, type Column, type Html } from '../layout.ts'
import { isRecord, parseJson } from '../payloads.ts'
import { readWrite, writeResult, type WriteOutcome } from './write.ts'

/** The plan stage writes one 'course-flag' row per course (src/plan/stage.ts). */
export const COURSE_FLAG_KIND = 'course-flag'

export interface CourseView {
  courseId: string
  title: string
  owner: string
  lastReviewed: string | null
  enrollments12m: number | null
  enrollmentsPrev12m: number | null
  /** retire | refresh | keep, or null before the plan ran */
  flag: string | null
  reasons: string[]
  skills: { id: string | null; label: string; state: string | null; inferred: boolean; halfLifeMonths: number | null }[]
  halving: { months: number | null; low: number | null; high: number | null } | null
  enrolmentTrend: string | null
  add: { id: string; label: string }[]
  snooze: { until: string; note: string; actor: string; at: string } | null
}

export interface CoursesData {
  filters: { owner?: string; flag?: string; showSnoozed: boolean }
  owners: string[]
  flagNames: string[]
  courses: CourseView[]
  counts: { courses: number; retire: number; refresh: number; snoozed: number }
  notes: string[]
}

const FLAG_ORDER: Record<string, number> = { retire: 0, refresh: 1, keep: 2 }

function skillsOf(p: Partial<CourseFlag>): CourseView['skills'] {
  return Array.isArray(p.skills)
    ? p.skills.map((s) => ({ id: s.id ?? null, label: String(s.label ?? s.ref ?? ''), state: s.state ?? null, inferred: Boolean(s.inferred), halfLifeMonths: s.halfLifeMonths ?? null }))
    : []
}

export function buildCourses(deps: Deps, filters: CoursesData['filters']): CoursesData {
  const { db } = deps
  const flagRows = planOutputs(db, COURSE_FLAG_KIND, 1_000_000)
  const flagByCourse = new Map<string, Partial<CourseFlag>>()
  for (const r of flagRows) {
    const p = parseJson(r.payload_json)
    if (isRecord(p)) flagByCourse.set(r.key, p as Partial<CourseFlag>)
  }
  const currentFlags = new Map([...flagByCourse].filter(([, p]) => typeof p.flag === 'string').map(([k, p]) => [k, p.flag as string]))
  const snoozes = activeSnoozes(db, currentFlags)
  const all: CourseView[] = allCourses(db).map((c) => {
    const p = flagByCourse.get(c.course_id) ?? {}
    const sn = snoozes.get(c.course_id)
    return {
      courseId: c.course_id, title: c.title, owner: c.owner, lastReviewed: c.last_reviewed?.slice(0, 10) ?? null,
      enrollments12m: c.enrollments_12m, enrollmentsPrev12m: c.enrollments_prev_12m,
      flag: typeof p.flag === 'string' ? p.flag : null,
      reasons: Array.isArray(p.reasons) ? p.reasons.filter((x): x is string => typeof x === 'string') : [],
      skills: skillsOf(p).length ? skillsOf(p) : (c.skills ? c.skills.split('|').map((id) => ({ id, label: id, state: null, inferred: false, halfLifeMonths: null })) : []),
      halving: isRecord(p.halving) ? { months: p.halving.months ?? null, low: p.halving.low ?? null, high: p.halving.high ?? null } : null,
      enrolmentTrend: isRecord(p.enrolment) && typeof p.enrolment.trend === 'string' ? p.enrolment.trend : null,
      add: Array.isArray(p.add) ? p.add.map((a) => ({ id: a.id, label: a.label })) : [],
      snooze: sn ? { until: sn.until, note: sn.note, actor: sn.actor, at: sn.at } : null,
    }
  })
  const owners = [...new Set(all.map((c) => c.owner).filter(Boolean))].sort()
  const flagNames = [...new Set(all.map((c) => c.flag).filter((x): x is string => x !== null))].sort((a, b) => (FLAG_ORDER[a] ?? 9) - (FLAG_ORDER[b] ?? 9))
  const courses = all
    .filter((c) => !filters.owner || c.owner === filters.owner)
    .filter((c) => !filters.flag || (filters.flag === 'none' ? c.flag === null : c.flag === filters.flag))
    .filter((c) => filters.showSnoozed || !c.snooze)
    .sort((a, b) => (FLAG_ORDER[a.flag ?? ''] ?? 9) - (FLAG_ORDER[b.flag ?? ''] ?? 9) || (a.halving?.months ?? Infinity) - (b.halving?.months ?? Infinity) || a.title.localeCompare(b.title))
  const notes: string[] = []
  if (all.length === 0) notes.push('No courses imported yet: run `tides import courses FILE`.')
  else if (flagRows.length === 0) notes.push('No course flags yet: run `tides run plan`.')
  return {
    filters, owners, flagNames, courses,
    counts: {
      courses: all.length, retire: all.filter((c) => c.flag === 'retire').length, refresh: all.filter((c) => c.flag === 'refresh').length,
      snoozed: all.filter((c) => c.snooze).length,
    },
    notes,
  }
}

function parseFilters(c: Ctx): CoursesData['filters'] {
  const owner = c.req.query('owner')?.slice(0, 200) || undefined
  const flag = c.req.query('flag')?.slice(0, 200) || undefined
  return { owner, flag, showSnoozed: c.req.query('snoozed') === '1' }
}

const FLAG_SHAPES: Record<string, string> = { retire: '✕', refresh: '↻', keep: '✓' }

export function flagMark(flag: string | null): Html {
  if (!flag) return html`<span class="muted">not assessed</span>`
  return html`<span class="flag flag-${FLAG_SHAPES[flag] ? flag : 'other'}"><span aria-hidden="true">${FLAG_SHAPES[flag] ?? '⚑'}</span> ${flag}</span>`
}

const COLUMNS: Column<CourseView>[] = [
  { key: 'courseId', label: 'Course', value: (r) => r.courseId, cell: (r) => html`<strong>${r.title}</strong><br><small>${r.courseId}</small>` },
  { key: 'title', label: 'Title', value: (r) => r.title, csvOnly: true },
  { key: 'owner', label: 'Owner', value: (r) => r.owner },
  { key: 'flag', label: 'Flag', value: (r) => r.flag ?? '', cell: (r) => flagMark(r.flag) },
  {
    key: 'reasons', label: 'Reasons', value: (r) => r.reasons.join(' '),
    cell: (r) => (r.reasons.length ? html`<ul class="reasons">${r.reasons.map((x) => html`<li>${x}</li>`)}</ul>` : '–'),
  },
  {
    key: 'skills', label: 'Skills', value: (r) => r.skills.map((s) => s.id ?? s.label).join('|'),
    cell: (r) => html`${r.skills.map((s, i) => html`${i ? ', ' : ''}${s.id ? html`<a href="/skills/${encodeURIComponent(s.id)}">${s.label}</a>` : s.label}${s.state ? html` <small>(${s.state})</small>` : ''}`)}`,
  },
  {
    key: 'halvingMonths', label: 'Demand halves in', numeric: true, value: (r) => r.halving?.months ?? null,
    cell: (r) => (r.halving?.months != null ? html`${f.months(r.halving.months)}<br><small>${f.interval(r.halving.low, r.halving.high, f.months)}</small>` : '–'),
  },
  { key: 'halvingLow', label: 'Halving low', value: (r) => r.halving?.low ?? null, csvOnly: true },
  { key: 'halvingHigh', label: 'Halving high', value: (r) => r.halving?.high ?? null, csvOnly: true },
  { key: 'enrollments12m', label: 'Enrolments 12m (year before)', numeric: true, value: (r) => r.enrollments12m, cell: (r) => `${f.num(r.enrollments12m)} (${f.num(r.enrollmentsPrev12m)})` },
  { key: 'enrollmentsPrev12m', label: 'Enrolments year before', value: (r) => r.enrollmentsPrev12m, csvOnly: true },
  { key: 'add', label: 'Could add', value: (r) => r.add.map((a) => a.id).join('|'), cell: (r) => html`${r.add.map((a, i) => html`${i ? ', ' : ''}<a href="/skills/${encodeURIComponent(a.id)}">${a.label}</a>`)}` },
  { key: 'lastReviewed', label: 'Last reviewed', value: (r) => r.lastReviewed ?? '' },
  { key: 'snoozedUntil', label: 'Snoozed until', value: (r) => r.snooze?.until ?? '', cell: (r) => (r.snooze ? html`${r.snooze.until.slice(0, 10)}<br><small>${r.snooze.note} (${r.snooze.actor})</small>` : '–') },
  { key: 'snoozeNote', label: 'Snooze note', value: (r) => r.snooze?.note ?? '', csvOnly: true },
]

function snoozeForm(c: Ctx, r: CourseView): Html {
  if (r.flag !== 'retire' && r.flag !== 'refresh') return html``
  const session = c.get('session')
  if (!session) return html`<a href="/login?next=/courses">Sign in to snooze</a>`
  const id = `snooze-${r.courseId.replace(/[^\w-]/g, '_')}`
  const until = new Date(Date.now() + 90 * 86_400_000).toISOString().slice(0, 10)
  return html`<form method="post" action="/courses/${encodeURIComponent(r.courseId)}/snooze" class="snooze">${csrfField(session)}
<label for="${id}-note">Note</label> <input id="${id}-note" name="note" required maxlength="2000" placeholder="why this can wait">
<label for="${id}-until">until</label> <input id="${id}-until" type="date" name="until" value="${until}" required>
<label for="${id}-who">by</label> <input id="${id}-who" name="who" maxlength="200" placeholder="your name (optional)" autocomplete="name">
<button type="submit">Snooze</button></form>`
}

export function renderCourses(c: Ctx, d: CoursesData, outcome?: WriteOutcome): Html {
  const columns: Column<CourseView>[] = [...COLUMNS, { key: 'action', label: 'Action', value: () => '', cell: (r) => snoozeForm(c, r) }]
  const sel = (name: string, label: string, values: string[], cur?: string, extra: [string, string][] = []) =>
    html`<label>${label} <select name="${name}"><option value="">all</option>${extra.map(([v, t]) => html`<option value="${v}"${cur === v ? html` selected` : ''}>${t}</option>`)}${values.map((v) => html`<option value="${v}"${cur === v ? html` selected` : ''}>${v}</option>`)}</select></label>`
  const body = html`${outcome ? writeResult(outcome) : ''}${d.notes.map((n) => notice('warn', n))}
<p>${d.counts.courses} courses · ${d.counts.retire} flagged retire · ${d.counts.refresh} flagged refresh · ${d.counts.snoozed} snoozed (hidden unless shown). Flags point at courses whose skills lose demand; the course owner decides what to do, and can snooze a flag with a note.</p>
<form class="filters" method="get" action="/courses" aria-label="Filter courses">
${sel('owner', 'Owner', d.owners, d.filters.owner)} ${sel('flag', 'Flag', d.flagNames, d.filters.flag, [['none', 'not assessed']])}
<label><input type="checkbox" name="snoozed" value="1"${d.filters.showSnoozed ? html` checked` : ''}> show snoozed</label>
<button type="submit">Apply</button> <a href="/courses">Clear</a></form>
${dataTable({ id: 'courses', caption: 'Courses and their flags', columns, rows: d.courses, csv: withQuery(c, { format: 'csv' }, '/api/courses'), empty: 'No courses match these filters.' })}`
  return page({ title: 'Courses', active: 'courses', session: c.get('session'), path: c.req.path, body, scripts: ['forms.js'], api: withQuery(c, {}, '/api/courses') })
}

export function mountCourses(app: Hono<Env>, deps: Deps, guard: MiddlewareHandler<Env>): void {
  app.get('/courses', (c) => {
    const done = c.req.query('snoozed-course')
    const course = done ? courseById(deps.db, done) : undefined
    const outcome: WriteOutcome | undefined = course ? { status: 200, message: `Flags on “${course.title}” snoozed.` } : undefined
    return c.html(renderCourses(c, buildCourses(deps, parseFilters(c)), outcome))
  })
  app.get('/api/courses', (c) => {
    const d = buildCourses(deps, parseFilters(c))
    return wantsCsv(c) ? csv(c, 'courses', csvRows(d.courses, COLUMNS), COLUMNS.map((col) => col.key)) : c.json(d)
  })
  const snooze = async (c: Ctx) => {
    const id = c.req.param('id') ?? ''
    const input = await readWrite(c)
    const run = (): WriteOutcome => {
      if (!courseById(deps.db, id)) return { status: 404, message: `no course with id "${id}"` }
      const note = typeof input['note'] === 'string' ? input['note'] : ''
      const until = typeof input['until'] === 'string' ? input['until'] : ''
      if (!deps.actions.snoozeCourseFlag) return { status: 501, message: 'snoozing is not built in this version' }
      try {
        const who = typeof input['who'] === 'string' ? input['who'].trim().slice(0, 200) : ''
        deps.actions.snoozeCourseFlag(deps.db, id, note, until, who ? `${who} (${c.get('actor')})` : c.get('actor'))
      } catch (err) {
        if (err instanceof SnoozeError) return { status: 400, message: err.message }
        throw err
      }
      deps.afterWrite()
      return { status: 200, message: `course ${id} snoozed until ${until}` }
    }
    const outcome = run()
    if (c.req.path.startsWith('/api/')) return c.json(outcome.status === 200 ? { ok: true, message: outcome.message } : { error: outcome.message }, outcome.status)
    if (outcome.status === 200) return c.redirect(`/courses?snoozed-course=${encodeURIComponent(id)}`, 303)
    return c.html(renderCourses(c, buildCourses(deps, { showSnoozed: false }), outcome), outcome.status)
  }
  app.post('/courses/:id/snooze', guard, snooze)
  app.post('/api/courses/:id/snooze', guard, snooze)
}
