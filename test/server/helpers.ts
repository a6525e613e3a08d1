/**
 * @module test/server/helpers
 * Shared setup of the server tests: an app over the fixture database, sign-in, form posts, and
 * stand-in taxonomy actions (used until the taxonomy stage's own functions are wired).
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import type { Hono } from 'hono'
import { parseConfig, type Config } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { insertEvent } from '../../src/db/events.ts'
import { defaultActions, type Actions } from '../../src/server/actions.ts'
import { createApp } from '../../src/server/app.ts'
import type { Env } from '../../src/server/deps.ts'
import { buildFixture, type FixtureOptions } from './fixture.ts'

export const TOKEN = 'test-token-0123456789abcdef'
export const ORIGIN = 'http://localhost'

export interface TestApp {
  db: Db
  config: Config
  app: Hono<Env>
  afterWrites: number
}

/** Stand-ins that change candidate_terms and emit taxonomy.changed the way the taxonomy stage does (for tests of the wiring alone). */
export function fakeTaxonomyActions(): Actions {
  const decide = (db: Db, term: string, status: string, decision: unknown) =>
    db.transaction(() => {
      db.prepare("UPDATE candidate_terms SET status = ?, decision_json = ? WHERE term = ?").run(status, JSON.stringify(decision), term)
      insertEvent(db, 'taxonomy.changed', { term, status })
    })()
  return {
    ...defaultActions(),
    acceptAsConcept: (db, term, choice, actor) => {
      const id = choice.id ?? term.toLowerCase().replace(/[^a-z0-9]+/g, '-')
      db.prepare("INSERT INTO concepts(id, pref_label, type, origin) VALUES (?, ?, ?, 'review')").run(id, choice.label ?? term, choice.type ?? 'hard')
      decide(db, term, 'accepted', { as: 'concept', id, actor })
    },
    acceptAsAltLabel: (db, term, conceptId, actor) => {
      db.prepare("INSERT INTO labels(concept_id, label, kind) VALUES (?, ?, 'alt')").run(conceptId, term)
      decide(db, term, 'accepted', { as: 'altLabel', conceptId, actor })
    },
    dismissCandidate: (db, term, actor) => decide(db, term, 'dismissed', { actor }),
  }
}

const TMP = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-server-test-'))
process.on('exit', () => fs.rmSync(TMP, { recursive: true, force: true }))
const templates = new Map<string, string>()

/**
 * A fresh copy of the fixture database: built once per option set (the plan stage takes a few
 * hundred milliseconds), then copied file by file so every test starts from the same state.
 */
function fixtureDb(fixture: FixtureOptions, config: Config): Db {
  const key = JSON.stringify({ fixture, config })
  let template = templates.get(key)
  if (!template) {
    template = path.join(TMP, `template-${templates.size}.db`)
    const db = openDb(template)
    buildFixture(db, { ...fixture, config })
    db.pragma('wal_checkpoint(TRUNCATE)')
    db.close()
    templates.set(key, template)
  }
  const copy = path.join(TMP, `${crypto.randomUUID()}.db`)
  fs.copyFileSync(template, copy)
  return openDb(copy)
}

export function makeApp(opts: { token?: string | null; fixture?: FixtureOptions | false; actions?: Actions; config?: Record<string, unknown> } = {}): TestApp {
  const given = (opts.config?.['server'] ?? {}) as Record<string, unknown>
  const server = opts.token === null ? { ...given, token: undefined } : { ...given, token: opts.token ?? TOKEN }
  const config = parseConfig({ ...(opts.config ?? {}), server })
  const db = opts.fixture === false ? openDb(':memory:') : fixtureDb(opts.fixture || {}, config)
  const t: TestApp = { db, config, app: undefined as never, afterWrites: 0 }
  t.app = createApp(db, config, { actions: opts.actions ?? defaultActions(), afterWrite: () => t.afterWrites++, log: () => {} })
  return t
}

/** Signs in through POST /login; returns the cookie header value and the page's CSRF field. */
export async function signIn(app: Hono<Env>, token = TOKEN): Promise<{ cookie: string; csrf: string }> {
  const res = await app.request('/login', {
    method: 'POST',
    headers: { 'Content-Type': 'application/x-www-form-urlencoded', Origin: ORIGIN },
    body: new URLSearchParams({ token, next: '/' }).toString(),
  })
  if (res.status !== 303) throw new Error(`sign-in failed: ${res.status}`)
  const cookie = (res.headers.get('set-cookie') ?? '').split(';')[0]!
  const page = await (await app.request('/courses', { headers: { Cookie: cookie } })).text()
  const csrf = /name="_csrf" value="([^"]+)"/.exec(page)?.[1]
  if (!csrf) throw new Error('no CSRF field on the page after sign-in')
  return { cookie, csrf }
}

/** A same-origin form post (as a browser sends it). */
export function postForm(app: Hono<Env>, path: string, fields: Record<string, string>, headers: Record<string, string> = {}): Promise<Response> {
  return Promise.resolve(
    app.request(path, {
      method: 'POST',
      headers: { 'Content-Type': 'application/x-www-form-urlencoded', Origin: ORIGIN, ...headers },
      body: new URLSearchParams(fields).toString(),
    }),
  )
}

/** A JSON API post. */
export function postJson(app: Hono<Env>, path: string, body: unknown, headers: Record<string, string> = {}): Promise<Response> {
  return Promise.resolve(app.request(path, { method: 'POST', headers: { 'Content-Type': 'application/json', ...headers }, body: JSON.stringify(body) }))
}

export const bearer = (token = TOKEN) => ({ Authorization: `Bearer ${token}` })
