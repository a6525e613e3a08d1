/**
 * @module server/app
 * The hono application: dashboard pages, their JSON/CSV twins under /api, sign-in, static assets and
 * the demo's feed files. Built by a factory over a database handle so tests call `app.request()`
 * against an in-memory database without opening a port.
 *
 * Every response carries a Content-Security-Policy without inline scripts; every POST passes the
 * body limit, hono's csrf origin check, and the token guard (see security.ts).
 */
import { Hono } from 'hono'
import { bodyLimit } from 'hono/body-limit'
import { csrf } from 'hono/csrf'
import { html } from 'hono/html'
import { HTTPException } from 'hono/http-exception'
import { secureHeaders } from 'hono/secure-headers'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { dataStamp } from '../db/dashboard.ts'
import { defaultActions, type Actions } from './actions.ts'
import { loadAssets, mountAssets } from './assets.ts'
import { responseCache } from './cache.ts'
import { DEFAULT_GRACE_MS } from './freshness.ts'
import type { Deps, Env, NextRun } from './deps.ts'
import { mountFeeds } from './feeds.ts'
import { page } from './layout.ts'
import { mountLogin } from './login.ts'
import { mountCourses } from './pages/courses.ts'
import { mountOverview } from './pages/overview.ts'
import { mountReskilling } from './pages/reskilling.ts'
import { mountSkill } from './pages/skill.ts'
import { mountSources } from './pages/sources.ts'
import { mountTaxonomy } from './pages/taxonomy.ts'
import { CSP, hostGuard, requireWriter, sessionMiddleware } from './security.ts'
import { skillIndex } from './skill-index.ts'

/** Request bodies above this size are refused with 413 (forms and JSON here are small). */
export const MAX_BODY_BYTES = 64 * 1024

export interface AppOptions {
  /** next scheduled runs, for the overview and the sources page */
  nextRuns?: () => NextRun[]
  /** the stages' write functions (defaults: those built in this version) */
  actions?: Actions
  /** called after a write that emitted events (serve runs the subscribed stages) */
  afterWrite?: () => void
  /** log for unexpected errors */
  log?: (message: string) => void
  /** cache rendered GET responses until the data changes (default true; benchmarks of render time turn it off) */
  cache?: boolean
  /** how long another process's commits may go unseen by cached pages (default 2 s; see server/freshness) */
  graceMs?: number
}

/** Builds the overview's skill index ahead of the first visitor (a few hundred ms for 20,000 skills). */
export function warmUp(db: Db, config: Config): void {
  skillIndex(db, config.ability.minGroupSize)
}

/**
 * Builds the app.
 * @example
 * const app = createApp(openDb(':memory:'), parseConfig({}))
 * (await app.request('/healthz')).status // => 200
 */
export function createApp(db: Db, config: Config, options: AppOptions = {}): Hono<Env> {
  const deps: Deps = {
    db,
    config,
    nextRuns: options.nextRuns ?? (() => []),
    actions: options.actions ?? defaultActions(),
    afterWrite: options.afterWrite ?? (() => {}),
    graceMs: options.graceMs ?? DEFAULT_GRACE_MS,
  }
  const log = options.log ?? ((m: string) => console.error(m))
  const getToken = () => config.server.token
  const assets = loadAssets()
  const app = new Hono<Env>()

  app.use('*', secureHeaders({ contentSecurityPolicy: CSP, referrerPolicy: 'no-referrer', strictTransportSecurity: false, xFrameOptions: 'DENY' }))
  app.use('*', hostGuard(config.server.host))
  app.use('*', async (c, next) => {
    await next()
    if (!c.res.headers.has('Cache-Control')) c.res.headers.set('Cache-Control', 'no-store')
  })
  app.use('*', bodyLimit({ maxSize: MAX_BODY_BYTES, onError: (c) => c.text(`request body larger than ${MAX_BODY_BYTES} bytes`, 413) }))
  app.use('*', csrf())
  app.use('*', sessionMiddleware(getToken))
  if (options.cache !== false) app.use('*', responseCache(() => dataStamp(db), { graceMs: deps.graceMs }))
  const guard = requireWriter(getToken)

  mountFeeds(app as unknown as Hono, config.dataDir)
  mountAssets(app, assets)
  app.get('/healthz', (c) => c.json({ ok: true }))
  mountLogin(app, deps, guard)
  mountOverview(app, deps)
  mountSkill(app, deps)
  mountCourses(app, deps, guard)
  mountReskilling(app, deps)
  mountTaxonomy(app, deps, guard)
  mountSources(app, deps)

  app.notFound((c) => {
    if (c.req.path.startsWith('/api/')) return c.json({ error: `no route ${c.req.method} ${c.req.path}` }, 404)
    const body = html`<p>There is no page at this address. <a href="/">Back to the overview</a>.</p>`
    return c.html(page({ title: 'Not found', session: c.get('session') ?? null, path: c.req.path, body }), 404)
  })
  app.onError((err, c) => {
    if (err instanceof HTTPException) return err.getResponse()
    log(`server error on ${c.req.method} ${c.req.path}: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}`)
    if (c.req.path.startsWith('/api/')) return c.json({ error: 'internal error (details in the server log)' }, 500)
    return c.text('Internal error (details in the server log)', 500)
  })
  return app
}
