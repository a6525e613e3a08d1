import { describe, expect, it } from 'vitest'
import { MAX_BODY_BYTES } from '../../src/server/app.ts'
import { localPath, newSessionValue, readSession, safeEqual } from '../../src/server/security.ts'
import { ORIGIN, TOKEN, bearer, makeApp, postForm, postJson, signIn } from './helpers.ts'

const SNOOZE = { note: 'replacement course launches in spring', until: '2099-04-01' }
const notes = (t: ReturnType<typeof makeApp>, course: string) =>
  t.db.prepare("SELECT * FROM course_flag_notes WHERE course_id = ? AND action = 'snooze'").all(course) as { note: string; actor: string; until: string }[]

describe('the write guard', () => {
  it('answers 401 to an API write without a token, and to a wrong or malformed one', async () => {
    const t = makeApp()
    for (const headers of [{}, bearer('wrong-token-wrong-token'), { Authorization: 'Basic abc' }, { Authorization: 'Bearer' }]) {
      const res = await postJson(t.app, '/api/courses/c-flash-101/snooze', SNOOZE, headers)
      expect(res.status).toBe(401)
      expect(res.headers.get('www-authenticate')).toMatch(/^Bearer/)
      expect(((await res.json()) as { error: string }).error).toBeTruthy()
    }
    expect(notes(t, 'c-flash-101')).toEqual([])
  })

  it('answers 403 to every write while no token is configured', async () => {
    const t = makeApp({ token: null })
    expect((await postJson(t.app, '/api/courses/c-flash-101/snooze', SNOOZE, bearer())).status).toBe(403)
    expect((await postForm(t.app, '/login', { token: TOKEN })).status).toBe(403)
    expect(await (await t.app.request('/login')).text()).toContain('No token is configured')
  })

  it('refuses cross-site form posts (hono csrf: Origin / Sec-Fetch-Site) with 403', async () => {
    const t = makeApp()
    const { cookie, csrf } = await signIn(t.app)
    const body = new URLSearchParams({ ...SNOOZE, _csrf: csrf }).toString()
    const type = { 'Content-Type': 'application/x-www-form-urlencoded', Cookie: cookie }
    const extras: Record<string, string>[] = [{}, { Origin: 'http://evil.test' }, { Origin: 'null' }, { 'Sec-Fetch-Site': 'cross-site' }]
    for (const extra of extras) {
      const res = await t.app.request('/courses/c-flash-101/snooze', { method: 'POST', headers: { ...type, ...extra }, body })
      expect(res.status).toBe(403)
    }
    // a text/plain body is a "simple" cross-site request too
    const plain = await t.app.request('/api/courses/c-flash-101/snooze', { method: 'POST', headers: { 'Content-Type': 'text/plain', Origin: 'http://evil.test', ...bearer() }, body: '{}' })
    expect(plain.status).toBe(403)
    expect(notes(t, 'c-flash-101')).toEqual([])
  })

  it('answers 401 to a same-origin form post without a session, 403 without the right CSRF field', async () => {
    const t = makeApp()
    expect((await postForm(t.app, '/courses/c-flash-101/snooze', SNOOZE)).status).toBe(401)
    const { cookie, csrf } = await signIn(t.app)
    expect((await postForm(t.app, '/courses/c-flash-101/snooze', SNOOZE, { Cookie: cookie })).status).toBe(403)
    expect((await postForm(t.app, '/courses/c-flash-101/snooze', { ...SNOOZE, _csrf: `${csrf}x` }, { Cookie: cookie })).status).toBe(403)
    // a CSRF value from another session does not fit this one
    const other = await signIn(t.app)
    expect((await postForm(t.app, '/courses/c-flash-101/snooze', { ...SNOOZE, _csrf: other.csrf }, { Cookie: cookie })).status).toBe(403)
    // a forged cookie is no session at all
    expect((await postForm(t.app, '/courses/c-flash-101/snooze', { ...SNOOZE, _csrf: csrf }, { Cookie: 'tides_session=abc.def' })).status).toBe(401)
    expect(notes(t, 'c-flash-101')).toEqual([])
  })

  it('refuses request bodies over the limit with 413', async () => {
    const t = makeApp()
    const big = { ...SNOOZE, note: 'x'.repeat(MAX_BODY_BYTES + 10) }
    const res = await postJson(t.app, '/api/courses/c-flash-101/snooze', big, bearer())
    expect(res.status).toBe(413)
    // also when the client sends no Content-Length (chunked stream)
    const stream = new ReadableStream({
      start(controller) {
        controller.enqueue(new TextEncoder().encode(JSON.stringify(big)))
        controller.close()
      },
    })
    const chunked = await t.app.request('/api/courses/c-flash-101/snooze', { method: 'POST', headers: { 'Content-Type': 'application/json', ...bearer() }, body: stream, duplex: 'half' } as RequestInit)
    expect(chunked.status).toBe(413)
  })
})

describe('host names', () => {
  it('a loopback-bound server answers only to loopback names (DNS rebinding)', async () => {
    const t = makeApp()
    expect((await t.app.request('http://localhost/')).status).toBe(200)
    expect((await t.app.request('http://127.0.0.1:4780/api/overview')).status).toBe(200)
    expect((await t.app.request('http://[::1]:4780/healthz')).status).toBe(200)
    expect((await t.app.request('http://rebound.test:4780/api/overview')).status).toBe(403)
    const res = await t.app.request('http://rebound.test:4780/login', { method: 'POST', headers: { 'Content-Type': 'application/x-www-form-urlencoded', Origin: 'http://rebound.test:4780' }, body: `token=${TOKEN}` })
    expect(res.status).toBe(403)
    const open = makeApp({ config: { server: { host: '0.0.0.0', token: TOKEN } } })
    expect((await open.app.request('http://dashboard.fernhollow.test/healthz')).status).toBe(200)
  })
})

describe('signing in', () => {
  it('sets an HttpOnly SameSite=Strict cookie that is not the token, and redirects only on-site', async () => {
    const t = makeApp()
    const wrong = await postForm(t.app, '/login', { token: 'not-the-token', next: '/courses' })
    expect(wrong.status).toBe(401)
    expect(wrong.headers.get('set-cookie')).toBeNull()
    const res = await postForm(t.app, '/login', { token: TOKEN, next: '//evil.test/x' })
    expect(res.status).toBe(303)
    expect(res.headers.get('location')).toBe('/')
    const cookie = res.headers.get('set-cookie')!
    expect(cookie).toMatch(/HttpOnly/)
    expect(cookie).toMatch(/SameSite=Strict/)
    expect(cookie).not.toContain(TOKEN)
    const ok = await postForm(t.app, '/login', { token: TOKEN, next: '/courses?owner=x' })
    expect(ok.headers.get('location')).toBe('/courses?owner=x')
  })

  it('shows the forms once signed in, and signs out', async () => {
    const t = makeApp()
    expect(await (await t.app.request('/courses')).text()).toContain('Sign in to snooze')
    const { cookie, csrf } = await signIn(t.app)
    const page = await (await t.app.request('/taxonomy', { headers: { Cookie: cookie } })).text()
    expect(page).toContain('Accept as new skill')
    expect(page).toContain('Signed in for changes')
    const out = await postForm(t.app, '/logout', { _csrf: csrf }, { Cookie: cookie })
    expect(out.status).toBe(303)
    expect(out.headers.get('set-cookie')).toMatch(/tides_session=;.*Max-Age=0/)
  })

  it('session values: tampering, another token and malformed input are rejected', () => {
    const value = newSessionValue(TOKEN)
    expect(readSession(TOKEN, value)).not.toBeNull()
    expect(readSession(TOKEN, `${value}x`)).toBeNull()
    expect(readSession('another-token-another-token', value)).toBeNull()
    expect(readSession(TOKEN, 'no-dot')).toBeNull()
    expect(readSession(TOKEN, '.sig')).toBeNull()
    expect(readSession(undefined, value)).toBeNull()
    expect(safeEqual('abc', 'abc')).toBe(true)
    expect(safeEqual('abc', 'abd')).toBe(false)
    expect(localPath('/x?y=1')).toBe('/x?y=1')
    for (const bad of ['//evil', 'http://evil', '/\\evil', 'evil', undefined]) expect(localPath(bad)).toBe('/')
  })
})

describe('snoozing a course flag', () => {
  it('works from the page (session + CSRF) and records who, why and until when', async () => {
    const t = makeApp()
    const { cookie, csrf } = await signIn(t.app)
    const res = await postForm(t.app, '/courses/c-flash-101/snooze', { ...SNOOZE, who: 'Imogen', _csrf: csrf }, { Cookie: cookie })
    expect(res.status).toBe(303)
    expect(res.headers.get('location')).toBe('/courses?snoozed-course=c-flash-101')
    expect(notes(t, 'c-flash-101')).toEqual([expect.objectContaining({ note: SNOOZE.note, actor: 'Imogen (dashboard)', until: '2099-04-01T00:00:00.000Z' })])
    expect(t.afterWrites).toBe(1)
    const after = await (await t.app.request('/courses?snoozed-course=c-flash-101')).text()
    expect(after).toContain('Flags on “Animating with Adobe Flash” snoozed.')
    expect(after).not.toContain('<strong>Animating with Adobe Flash</strong>')
    const shown = await (await t.app.request('/courses?snoozed=1')).text()
    expect(shown).toContain('2099-04-01')
  })

  it('works from the API with the bearer token', async () => {
    const t = makeApp()
    const res = await postJson(t.app, '/api/courses/c-cobol-maint/snooze', SNOOZE, bearer())
    expect(res.status).toBe(200)
    expect(await res.json()).toMatchObject({ ok: true })
    expect(notes(t, 'c-cobol-maint')[0]).toMatchObject({ actor: 'api' })
    const api = (await (await t.app.request('/api/courses?snoozed=1')).json()) as { courses: { courseId: string; snooze: { until: string } | null }[] }
    expect(api.courses.find((c) => c.courseId === 'c-cobol-maint')!.snooze!.until).toBe('2099-04-01T00:00:00.000Z')
  })

  it.each([
    [{ note: '', until: '2099-01-01' }, 400, /note/],
    [{ note: 'why', until: 'tomorrow' }, 400, /until/],
    [{ note: 'why', until: '2001-01-01' }, 400, /future/],
    [{ note: 'why' }, 400, /until/],
  ])('refuses %j with %i', async (body, status, message) => {
    const t = makeApp()
    const res = await postJson(t.app, '/api/courses/c-flash-101/snooze', body, bearer())
    expect(res.status).toBe(status)
    expect(((await res.json()) as { error: string }).error).toMatch(message)
  })

  it('answers 404 for an unknown course, 400 for a course flagged keep, 400 for bad JSON, 415 for other bodies', async () => {
    const t = makeApp()
    expect((await postJson(t.app, '/api/courses/no-such/snooze', SNOOZE, bearer())).status).toBe(404)
    const keep = await postJson(t.app, '/api/courses/c-k8s-basics/snooze', SNOOZE, bearer())
    expect(keep.status).toBe(400)
    expect(((await keep.json()) as { error: string }).error).toMatch(/keep/)
    const bad = await t.app.request('/api/courses/c-flash-101/snooze', { method: 'POST', headers: { 'Content-Type': 'application/json', ...bearer() }, body: '{"note":' })
    expect(bad.status).toBe(400)
    const arr = await postJson(t.app, '/api/courses/c-flash-101/snooze', [1, 2], bearer())
    expect(arr.status).toBe(400)
    const xml = await t.app.request('/api/courses/c-flash-101/snooze', { method: 'POST', headers: { 'Content-Type': 'application/xml', ...bearer() }, body: '<a/>' })
    expect(xml.status).toBe(415)
  })

  it('shows a refused form post on the page with its reason (400)', async () => {
    const t = makeApp()
    const { cookie, csrf } = await signIn(t.app)
    const res = await postForm(t.app, '/courses/c-flash-101/snooze', { note: ' ', until: '2099-01-01', _csrf: csrf }, { Cookie: cookie })
    expect(res.status).toBe(400)
    expect(await res.text()).toMatch(/Not done:<\/strong> snooze: a note saying why is required/)
  })
})

describe('deciding on candidate terms', () => {
  const status = (t: ReturnType<typeof makeApp>, term: string) => (t.db.prepare('SELECT status FROM candidate_terms WHERE term = ?').get(term) as { status: string }).status

  it('accepts as a new skill from the page, emits taxonomy.changed and shows progress', async () => {
    const t = makeApp()
    const { cookie, csrf } = await signIn(t.app)
    const res = await postForm(t.app, '/taxonomy/decide', { term: 'agent orchestration', action: 'new', type: 'hard', _csrf: csrf }, { Cookie: cookie })
    expect(res.status).toBe(303)
    expect(status(t, 'agent orchestration')).toBe('accepted')
    expect(t.db.prepare("SELECT pref_label FROM concepts WHERE id = 'agent-orchestration'").get()).toEqual({ pref_label: 'agent orchestration' })
    expect(t.afterWrites).toBe(1)
    const progress = (await (await t.app.request('/api/taxonomy/progress')).json()) as { event: { id: number }; steps: { step: string; status: string }[]; done: boolean }
    expect(progress.event.id).toBeGreaterThan(0)
    expect(progress.steps).toEqual([expect.objectContaining({ step: 're-map', status: 'waiting' }), expect.objectContaining({ step: 'refit', status: 'waiting' })])
    expect(progress.done).toBe(false)
    const page = await (await t.app.request('/taxonomy?decided=1', { headers: { Cookie: cookie } })).text()
    expect(page).toContain('Decision saved')
    expect(page).toContain('data-done="0"')
    // a later map run and fit run complete the ripple
    const at = new Date(Date.now() + 1000).toISOString()
    t.db.prepare("INSERT INTO job_runs(stage, trigger, started_at, ended_at, status) VALUES ('map', 'event:taxonomy.changed', ?, ?, 'ok')").run(at, at)
    t.db.prepare("INSERT INTO job_runs(stage, trigger, started_at, status) VALUES ('fit', 'event:documents.mapped', ?, 'running')").run(at)
    const mid = (await (await t.app.request('/api/taxonomy/progress')).json()) as { steps: { status: string }[]; done: boolean }
    expect(mid.steps.map((s) => s.status)).toEqual(['done', 'running'])
    t.db.prepare("UPDATE job_runs SET status = 'ok', ended_at = ? WHERE stage = 'fit'").run(at)
    expect(((await (await t.app.request('/api/taxonomy/progress')).json()) as { done: boolean }).done).toBe(true)
  })

  it('adds an altLabel of a chosen skill, and dismisses, through the API', async () => {
    const t = makeApp()
    expect((await postJson(t.app, '/api/taxonomy/decide', { term: 'kube', action: 'alt', concept: 'kubernetes' }, bearer())).status).toBe(200)
    expect(t.db.prepare("SELECT 1 AS x FROM labels WHERE concept_id = 'kubernetes' AND label = 'kube' AND kind = 'alt'").get()).toEqual({ x: 1 })
    expect((await postJson(t.app, '/api/taxonomy/decide', { term: 'synergy', action: 'dismiss' }, bearer())).status).toBe(200)
    expect(status(t, 'synergy')).toBe('dismissed')
    // a prefLabel (any case) names the skill as well as its id
    const other = makeApp()
    expect((await postJson(other.app, '/api/taxonomy/decide', { term: 'kube', action: 'alt', concept: 'kubernetes ' }, bearer())).status).toBe(200)
    const third = makeApp()
    expect((await postJson(third.app, '/api/taxonomy/decide', { term: 'kube', action: 'alt', concept: 'KUBERNETES' }, bearer())).status).toBe(200)
    expect(third.db.prepare("SELECT concept_id FROM labels WHERE label = 'kube'").get()).toEqual({ concept_id: 'kubernetes' })
    const counts = ((await (await t.app.request('/api/taxonomy')).json()) as { counts: Record<string, number> }).counts
    expect(counts).toEqual({ open: 1, accepted: 1, dismissed: 1 })
  })

  it.each([
    [{ term: 'no such term', action: 'new' }, 404],
    [{ term: 'kube', action: 'explode' }, 400],
    [{ term: 'kube', action: 'alt' }, 400],
    [{ term: 'kube', action: 'alt', concept: 'no-such-skill' }, 400],
    [{ term: 'kube', action: 'new', type: 'medium' }, 400],
    [{ term: 'kube', action: 'new', label: 'K8s' }, 400], // the taxonomy stage refuses a label another skill has
  ])('refuses %j with %i', async (body, code) => {
    const t = makeApp()
    expect((await postJson(t.app, '/api/taxonomy/decide', body, bearer())).status).toBe(code)
    expect(status(t, 'kube')).toBe('open')
    expect(t.afterWrites).toBe(0)
  })

  it('answers 409 for a term already decided, 501 when the taxonomy functions are not built, 401 without token', async () => {
    const t = makeApp()
    await postJson(t.app, '/api/taxonomy/decide', { term: 'synergy', action: 'dismiss' }, bearer())
    expect((await postJson(t.app, '/api/taxonomy/decide', { term: 'synergy', action: 'dismiss' }, bearer())).status).toBe(409)
    const bare = makeApp({ actions: {} })
    expect((await postJson(bare.app, '/api/taxonomy/decide', { term: 'kube', action: 'dismiss' }, bearer())).status).toBe(501)
    expect((await postJson(bare.app, '/api/courses/c-flash-101/snooze', SNOOZE, bearer())).status).toBe(501)
    expect((await postJson(t.app, '/api/taxonomy/decide', { term: 'kube', action: 'dismiss' })).status).toBe(401)
    expect((await postForm(t.app, '/taxonomy/decide', { term: 'kube', action: 'dismiss' }, { Origin: ORIGIN })).status).toBe(401)
  })
})
