/**
 * @module server/pages/courses
 * Courses with the plan's flags and their reasons, filterable by owner and flag, with a snooze form
 * (a note and a date) that calls the plan stage's snoozeCourseFlag. JSON twin: /api/courses;
 * CSV: /api/courses?format=csv; write: POST /courses/:id/snooze (form) or /api/courses/:id/snooze (JSON).
 */
import type { Hono, MiddlewareHandler } from 'hono'
import { html } from 'hono/html'
import { allCourses, courseById, flagNotes, planOutputs, type FlagNoteRow } from '../../db/dashboard.ts'
import { csv, wantsCsv, withQuery, type Ctx, type Deps, type Env } from '../deps.ts'
import * as f from '../format.ts'
import { csrfField, csvRows, dataTable, notice, page, type Column, type Html } from '../layout.ts'
import { isRecord, parseJson } from '../payloads.ts'
import { readWrite, writeResult, type WriteOutcome } from './write.ts'

/** plan_outputs kinds that hold course flags (the first with rows wins). */
export const COURSE_FLAG_KINDS = ['course-flags', 'course-flag', 'course_flags', 'courses'] as const

export interface CourseFlag {
  flag: string
  reason: string
}

export interface CourseView {
  courseId: string
  title: string
  owner: string
  lastReviewed: string | null
  enrollments12m: number | null
  enrollmentsPrev12m: number | null
  skills: string[]
  flags: CourseFlag[]
  score: number | null
  snoozedUntil: string | null
  snoozeNote: string | null
}

export interface CoursesData {
  filters: { owner?: string; flag?: string; showSnoozed: boolean }
  owners: string[]
  flagNames: string[]
  courses: CourseView[]
  counts: { courses: number; flagged: number; snoozed: number }
  notes: string[]
}

/** Reads a course's flags from a plan payload: `flags: [{flag, reason}]`, `flags: ['x']` or `flag` + `reasons`. */
export function readFlags(payload: unknown): CourseFlag[] {
  if (!isRecord(payload)) return []
  const list = payload['flags']
  const out: CourseFlag[] = []
  const reasonOf = (o: Record<string, unknown>): string => {
    const r = o['reason'] ?? o['reasons'] ?? o['why'] ?? o['text']
    return Array.isArray(r) ? r.filter((x) => typeof x === 'string').join('; ') : typeof r === 'string' ? r : ''
  }
  if (Array.isArray(list)) {
    for (const item of list) {
      if (typeof item === 'string') out.push({ flag: item, reason: '' })
      else if (isRecord(item)) {
        const name = item['flag'] ?? item['kind'] ?? item['type'] ?? item['code']
        if (typeof name === 'string') out.push({ flag: name, reason: reasonOf(item) })
      }
    }
  } else if (typeof payload['flag'] === 'string') {
    out.push({ flag: payload['flag'], reason: reasonOf(payload) })
  }
  return out
}

function activeSnooze(notes: readonly FlagNoteRow[], nowIso: string): FlagNoteRow | null {
  for (const n of notes) {
    if (n.action === 'unsnooze') return null
    if (n.action === 'snooze') return n.until !== null && n.until > nowIso ? n : null
  }
  return null
}

export function buildCourses(deps: Deps, filters: CoursesData['filters']): CoursesData {
  const { db } = deps
  let flagRows: ReturnType<typeof planOutputs> = []
  for (const kind of COURSE_FLAG_KINDS) {
    flagRows = planOutputs(db, kind, 100_000)
    if (flagRows.length) break
  }
  const flagsByCourse = new Map(flagRows.map((r) => [r.key, { flags: readFlags(parseJson(r.payload_json)), score: r.score }]))
  const notesByCourse = new Map<string, FlagNoteRow[]>()
  for (const n of flagNotes(db, undefined, 100_000)) {
    if (!notesByCourse.has(n.course_id)) notesByCourse.set(n.course_id, [])
    notesByCourse.get(n.course_id)!.push(n)
  }
  const now = new Date().toISOString()
  const all: CourseView[] = allCourses(db).map((c) => {
    const fl = flagsByCourse.get(c.course_id)
    const snooze = activeSnooze(notesByCourse.get(c.course_id) ?? [], now)
    return {
      courseId: c.course_id, title: c.title, owner: c.owner, lastReviewed: c.last_reviewed,
      enrollments12m: c.enrollments_12m, enrollmentsPrev12m: c.enrollments_prev_12m,
      skills: c.skills ? c.skills.split('|') : [], flags: fl?.flags ?? [], score: fl?.score ?? null,
      snoozedUntil: snooze?.until ?? null, snoozeNote: snooze?.note ?? null,
    }
  })
  const owners = [...new Set(all.map((c) => c.owner).filter(Boolean))].sort()
  const flagNames = [...new Set(all.flatMap((c) => c.flags.map((x) => x.flag)))].sort()
  const courses = all
    .filter((c) => !filters.owner || c.owner === filters.owner)
    .filter((c) => !filters.flag || (filters.flag === 'none' ? c.flags.length === 0 : c.flags.some((x) => x.flag === filters.flag)))
    .filter((c) => filters.showSnoozed || !c.snoozedUntil)
    .sort((a, b) => b.flags.length - a.flags.length || (b.score ?? -Infinity) - (a.score ?? -Infinity) || a.title.localeCompare(b.title))
  const notes: string[] = []
  if (all.length === 0) notes.push('No courses imported yet: run `tides import courses FILE`.')
  else if (flagRows.length === 0) notes.push('No course flags yet: run `tides run plan`.')
  return {
    filters, owners, flagNames, courses,
    counts: { courses: all.length, flagged: all.filter((c) => c.flags.length).length, snoozed: all.filter((c) => c.snoozedUntil).length },
    notes,
  }
}

function parseFilters(c: Ctx): CoursesData['filters'] {
  const owner = c.req.query('owner')?.slice(0, 200) || undefined
  const flag = c.req.query('flag')?.slice(0, 200) || undefined
  return { owner, flag, showSnoozed: c.req.query('snoozed') === '1' }
}

const COLUMNS: Column<CourseView>[] = [
  { key: 'courseId', label: 'Course', value: (r) => r.courseId, cell: (r) => html`<strong>${r.title}</strong><br><small>${r.courseId}</small>` },
  { key: 'title', label: 'Title', value: (r) => r.title, csvOnly: true },
  { key: 'owner', label: 'Owner', value: (r) => r.owner },
  { key: 'skills', label: 'Skills', value: (r) => r.skills.join('|'), cell: (r) => html`${r.skills.map((s, i) => html`${i ? ', ' : ''}<a href="/skills/${encodeURIComponent(s)}">${s}</a>`)}` },
  {
    key: 'flags', label: 'Flags and reasons', value: (r) => r.flags.map((x) => (x.reason ? `${x.flag}: ${x.reason}` : x.flag)).join('; '),
    cell: (r) => (r.flags.length ? html`<ul class="flags">${r.flags.map((x) => html`<li><span class="flag"><span aria-hidden="true">⚑</span> ${x.flag}</span>${x.reason ? html` ${x.reason}` : ''}</li>`)}</ul>` : html`<span class="muted">no flag</span>`),
  },
  { key: 'lastReviewed', label: 'Last reviewed', value: (r) => r.lastReviewed ?? '' },
  { key: 'enrollments12m', label: 'Enrolments 12m (before)', numeric: true, value: (r) => r.enrollments12m, cell: (r) => `${f.num(r.enrollments12m)} (${f.num(r.enrollmentsPrev12m)})` },
  { key: 'snoozedUntil', label: 'Snoozed until', value: (r) => r.snoozedUntil ?? '', cell: (r) => (r.snoozedUntil ? html`${r.snoozedUntil.slice(0, 10)}<br><small>${r.snoozeNote ?? ''}</small>` : '–') },
]

function snoozeForm(c: Ctx, r: CourseView): Html {
  if (!r.flags.length) return html``
  const session = c.get('session')
  if (!session) return html`<a href="/login?next=/courses">Sign in to snooze</a>`
  const id = `snooze-${r.courseId.replace(/[^\w-]/g, '_')}`
  const until = new Date(Date.now() + 90 * 86_400_000).toISOString().slice(0, 10)
  return html`<form method="post" action="/courses/${encodeURIComponent(r.courseId)}/snooze" class="snooze">${csrfField(session)}
<label for="${id}-note">Note</label> <input id="${id}-note" name="note" required maxlength="1000" placeholder="why this can wait">
<label for="${id}-until">until</label> <input id="${id}-until" type="date" name="until" value="${until}" required>
<button type="submit">Snooze</button></form>`
}

export function renderCourses(c: Ctx, d: CoursesData, outcome?: WriteOutcome): Html {
  const columns: Column<CourseView>[] = [...COLUMNS, { key: 'action', label: 'Action', value: () => '', cell: (r) => snoozeForm(c, r) }]
  const sel = (name: string, label: string, values: string[], cur?: string, extra: [string, string][] = []) =>
    html`<label>${label} <select name="${name}"><option value="">all</option>${extra.map(([v, t]) => html`<option value="${v}"${cur === v ? html` selected` : ''}>${t}</option>`)}${values.map((v) => html`<option value="${v}"${cur === v ? html` selected` : ''}>${v}</option>`)}</select></label>`
  const body = html`${outcome ? writeResult(outcome) : ''}${d.notes.map((n) => notice('warn', n))}
<p>${d.counts.courses} courses · ${d.counts.flagged} flagged · ${d.counts.snoozed} snoozed. Flags point at courses tied to fading skills or losing enrolments; a course owner decides what to do.</p>
<form class="filters" method="get" action="/courses" aria-label="Filter courses">
${sel('owner', 'Owner', d.owners, d.filters.owner)} ${sel('flag', 'Flag', d.flagNames, d.filters.flag, [['none', 'no flag']])}
<label><input type="checkbox" name="snoozed" value="1"${d.filters.showSnoozed ? html` checked` : ''}> show snoozed</label>
<button type="submit">Apply</button> <a href="/courses">Clear</a></form>
${dataTable({ id: 'courses', caption: 'Courses and their flags', columns, rows: d.courses, csv: withQuery(c, { format: 'csv' }, '/api/courses'), empty: 'No courses match these filters.' })}`
  return page({ title: 'Courses', active: 'courses', session: c.get('session'), path: c.req.path, body, scripts: ['forms.js'], api: withQuery(c, {}, '/api/courses') })
}

/** Validates a snooze request's fields; returns an error message or the clean values. */
export function validateSnooze(note: unknown, until: unknown, now = new Date()): { note: string; untilIso: string } | string {
  if (typeof note !== 'string' || note.trim() === '') return 'note: write why the flag can wait'
  if (note.length > 1000) return 'note: at most 1000 characters'
  if (typeof until !== 'string' || !/^\d{4}-\d{2}-\d{2}(T[\d:.]+Z)?$/.test(until)) return 'until: a date as YYYY-MM-DD'
  const t = Date.parse(until.length === 10 ? `${until}T00:00:00Z` : until)
  if (Number.isNaN(t)) return 'until: not a valid date'
  if (t <= now.getTime()) return 'until: must be in the future'
  if (t > now.getTime() + 2 * 366 * 86_400_000) return 'until: at most two years ahead'
  return { note: note.trim(), untilIso: new Date(t).toISOString() }
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
      const clean = validateSnooze(input['note'], input['until'])
      if (typeof clean === 'string') return { status: 400, message: clean }
      if (!deps.actions.snoozeCourseFlag) return { status: 501, message: 'snoozing is not built in this version' }
      deps.actions.snoozeCourseFlag(deps.db, id, clean.note, clean.untilIso, c.get('actor'))
      deps.afterWrite()
      return { status: 200, message: `course ${id} snoozed until ${clean.untilIso.slice(0, 10)}` }
    }
    const outcome = run()
    if (c.req.path.startsWith('/api/')) return c.json(outcome.status === 200 ? { ok: true, message: outcome.message } : { error: outcome.message }, outcome.status)
    if (outcome.status === 200) return c.redirect(`/courses?snoozed-course=${encodeURIComponent(id)}`, 303)
    return c.html(renderCourses(c, buildCourses(deps, { showSnoozed: false }), outcome), outcome.status)
  }
  app.post('/courses/:id/snooze', guard, snooze)
  app.post('/api/courses/:id/snooze', guard, snooze)
}
