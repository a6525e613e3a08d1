/**
 * Crash-safety harness, shared by the fast test (a few kills) and the soak run (many): a stage is
 * started in its own process (`tides run STAGE --only`) and killed with SIGKILL at a random point
 * while it works; then `tides run all` finishes the job. The database must pass
 * `PRAGMA integrity_check` right after the kill, every event left in the outbox must announce work
 * that is really there (nothing announced for rolled-back work), and after the restart the results
 * must equal those of `run all` without the kill, the events written since the base must sum up to
 * those of the clean run (eventSummary), and every subscribed stage must be past every event of its
 * types (no event lost). A webhook endpoint served by the test process (startHookServer) receives
 * the deliveries of every run: each must be a stored event, byte for byte as stored and signed, and
 * by the end of the restart every event since the base must have reached it. When a check fails,
 * the databases are kept and their folder named.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import http from 'node:http'
import type { AddressInfo, Socket } from 'node:net'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { expect } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { setCursor } from '../../src/db/events.ts'
import { deliverWebhooks } from '../../src/events/webhooks.ts'
import type { WebhookConfig } from '../../src/ingest/config.ts'
import { findStage } from '../../src/stages.ts'
import { COUNT_MAPPED } from '../../src/db/taxonomy.ts'
import { changedTables, copyDb, integrity, query, resultHash, sleep, startTides, tides, waitFor, type Workspace } from './helpers.ts'

export type CrashStage = 'ingest' | 'map' | 'fit' | 'plan'

/** The stages that must have run before `stage` has its input (in pipeline order, built ones only). */
export function stagesBefore(stage: CrashStage): string[] {
  const order = ['ingest', 'map', 'fit', 'ability']
  const upTo = stage === 'plan' ? order.length : order.indexOf(stage)
  return order.slice(0, upTo).filter((s) => findStage(s))
}

interface EventRow {
  id: number
  type: string
  payload_json: string
  created_at: string
}

function eventsAfter(file: string, after: number, type: string): (EventRow & { p: Record<string, unknown> })[] {
  return query<EventRow>(file, 'SELECT id, type, payload_json, created_at FROM events WHERE id > ? AND type = ? ORDER BY id', after, type).map((e) => ({ ...e, p: JSON.parse(e.payload_json) as Record<string, unknown> }))
}

/** Event types each stage announces its work with. */
const STAGE_EVENTS: Record<CrashStage, string> = {
  ingest: 'documents.ingested',
  map: 'documents.mapped',
  fit: 'curves.fitted',
  plan: 'plan.updated',
}

/** Where a kill can be measured against: the last event id, mapped documents and stored rows of the base. */
export interface Baseline {
  lastEvent: number
  mapped: number
}

export function baselineOf(file: string): Baseline {
  return {
    lastEvent: query<{ id: number }>(file, 'SELECT COALESCE(MAX(id), 0) AS id FROM events')[0]!.id,
    mapped: query<{ n: number }>(file, COUNT_MAPPED)[0]!.n,
  }
}

/**
 * What the documents.mapped events since the base announced, summed over runs. A map run's counts
 * are cumulative (each event carries the run's total so far) and start again in the next run, so
 * what a run announced is its last event's. A run ends where the next map run's job starts (its
 * started_at is not after the event's created_at: same clock, milliseconds) or, for events without
 * such a job row (the checks' own tests), where the count stops growing.
 */
function mappedAnnounced(file: string, base: Baseline): { mapped: number; mentions: number; rollups: number; versions: number[] } {
  const events = eventsAfter(file, base.lastEvent, 'documents.mapped')
  const starts = query<{ started_at: string }>(file, "SELECT started_at FROM job_runs WHERE stage = 'map' ORDER BY started_at").map((r) => r.started_at)
  const runOf = (createdAt: string) => starts.filter((s) => s <= createdAt).length
  const total = { mapped: 0, mentions: 0, rollups: 0, versions: [] as number[] }
  events.forEach((e, i) => {
    const next = events[i + 1]
    const last = !next || runOf(next.created_at) !== runOf(e.created_at) || Number(next.p['mapped'] ?? 0) <= Number(e.p['mapped'] ?? 0)
    if (!last) return
    total.mapped += Number(e.p['mapped'] ?? 0)
    total.mentions += Number(e.p['mentions'] ?? 0)
    total.rollups += Number(e.p['rollups'] ?? 0)
  })
  total.versions = [...new Set(events.map((e) => Number(e.p['version'])))].sort((a, b) => a - b)
  return total
}

/**
 * Nothing announced for work that rolled back: every event written since the base is backed by
 * stored work. documents.ingested: its range of document ids is stored with the counts it states.
 * documents.mapped (counts cumulative within a run): the sum of the runs' last counts does not
 * exceed the documents mapped since the base. curves.fitted: the curves table holds the skills it
 * states. plan.updated: the stored needs ranking has the length it states.
 */
export function expectEventsBackedByWork(file: string, base: Baseline = { lastEvent: 0, mapped: 0 }): void {
  for (const { p } of eventsAfter(file, base.lastEvent, 'documents.ingested')) {
    const { firstId, lastId } = p as { firstId?: number; lastId?: number }
    if (firstId === undefined || lastId === undefined) continue
    const [row] = query<{ n: number }>(file, 'SELECT COUNT(*) AS n FROM documents WHERE id BETWEEN ? AND ?', firstId, lastId)
    expect(row!.n, `documents ${firstId}..${lastId} announced as ingested`).toBe(Number(p['new'] ?? 0) + Number(p['duplicate'] ?? 0))
  }
  if (eventsAfter(file, base.lastEvent, 'documents.mapped').length) {
    const now = query<{ n: number }>(file, COUNT_MAPPED)[0]!.n
    expect(mappedAnnounced(file, base).mapped, 'documents announced as mapped').toBeLessThanOrEqual(now - base.mapped)
  }
  const fitted = eventsAfter(file, base.lastEvent, 'curves.fitted').at(-1)
  if (fitted) expect(query<{ n: number }>(file, 'SELECT COUNT(*) AS n FROM curves')[0]!.n, 'curves announced as fitted').toBe(Number(fitted.p['skills']))
  const planned = eventsAfter(file, base.lastEvent, 'plan.updated').at(-1)
  if (planned) expect(query<{ n: number }>(file, "SELECT COUNT(*) AS n FROM plan_outputs WHERE kind = 'need'")[0]!.n, 'needs announced as ranked').toBe(Number(planned.p['needs']))
}

/**
 * The events written since the base, reduced to what a kill and restart must leave as a clean run
 * does. Two databases are compared with toEqual on this; each field says why it must be equal.
 */
export function eventSummary(file: string, base: Baseline) {
  const omit = (p: Record<string, unknown> | undefined, keys: string[]) => (p ? Object.fromEntries(Object.entries(p).filter(([k]) => !keys.includes(k))) : null)
  const ingested = eventsAfter(file, base.lastEvent, 'documents.ingested')
  // Per source, the totals of read, new and duplicate, and the earliest and latest posting date: a
  // killed ingest has announced the batches it committed and the restart announces the rest (the
  // JSON Lines reader resumes after the last stored line), so the number of events may differ but
  // not their sums. runId differs (the killed run's and the restart's) and is left out.
  const sources: Record<string, { read: number; new: number; duplicate: number; from: string | null; to: string | null }> = {}
  for (const { p } of ingested) {
    const s = (sources[String(p['source'])] ??= { read: 0, new: 0, duplicate: 0, from: null, to: null })
    s.read += Number(p['read'] ?? 0)
    s.new += Number(p['new'] ?? 0)
    s.duplicate += Number(p['duplicate'] ?? 0)
    const from = p['from'] as string | null
    const to = p['to'] as string | null
    if (from !== null && (s.from === null || from < s.from)) s.from = from
    if (to !== null && (s.to === null || to > s.to)) s.to = to
  }
  // The document ids announced, as merged ranges: batches may split differently, but the ids a
  // rolled-back batch took are taken again by the restart (INTEGER PRIMARY KEY reuses them), so
  // the union is the same.
  const ranges = ingested
    .filter(({ p }) => p['firstId'] !== undefined && p['lastId'] !== undefined)
    .map(({ p }) => [Number(p['firstId']), Number(p['lastId'])] as [number, number])
    .sort((a, b) => a[0] - b[0])
  const ids: [number, number][] = []
  for (const [first, last] of ranges) {
    const prev = ids.at(-1)
    if (prev && first <= prev[1] + 1) prev[1] = Math.max(prev[1], last)
    else ids.push([first, last])
  }
  // Sets of payloads (sorted, repeats dropped): a fit or plan whose transaction committed before
  // the kill (job run still open) runs again on restart and finds the states and flags already
  // stored, so it announces no change twice; at-least-once would allow a repeat, hence sets.
  const payloadSet = (type: string) => [...new Set(eventsAfter(file, base.lastEvent, type).map((e) => e.payload_json))].sort()
  return {
    // the kinds of event written since the base
    types: query<{ type: string }>(file, 'SELECT DISTINCT type FROM events WHERE id > ? ORDER BY type', base.lastEvent).map((r) => r.type),
    ingested: { sources, ids },
    // documents, mentions and roll-ups announced as mapped, summed over runs (mappedAnnounced)
    mapped: mappedAnnounced(file, base),
    // The last summary of the fit, ability and plan runs describes the stored results. Left out:
    // stateChanges and newFlags, which count what changed since the previous run: a fit or plan
    // repeated after a kill that came after its commit announces 0 there (the changes themselves
    // are compared as sets below). None of these payloads carries a timing.
    fitted: omit(eventsAfter(file, base.lastEvent, 'curves.fitted').at(-1)?.p, ['stateChanges']),
    ability: omit(eventsAfter(file, base.lastEvent, 'ability.updated').at(-1)?.p, []),
    planned: omit(eventsAfter(file, base.lastEvent, 'plan.updated').at(-1)?.p, ['newFlags']),
    stateChanges: payloadSet('skill.state-changed'),
    courseFlags: payloadSet('course.flagged'),
  }
}

/**
 * No event lost: after the restart every stage that subscribes to events has handled all of its
 * types (its cursor is past the last one), and the stage that was killed has announced its work.
 */
export function expectNothingPending(file: string, stage: CrashStage, base: Baseline): void {
  const cursors = new Map(query<{ consumer: string; last_event_id: number }>(file, 'SELECT consumer, last_event_id FROM event_cursors').map((r) => [r.consumer, r.last_event_id]))
  for (const name of ['ingest', 'map', 'fit', 'ability', 'plan']) {
    const s = findStage(name)
    if (!s || s.subscribesTo.length === 0) continue
    const placeholders = s.subscribesTo.map(() => '?').join(', ')
    const last = query<{ id: number }>(file, `SELECT COALESCE(MAX(id), 0) AS id FROM events WHERE type IN (${placeholders})`, ...s.subscribesTo)[0]!.id
    expect(cursors.get(`stage:${name}`) ?? 0, `stage ${name} left events pending`).toBeGreaterThanOrEqual(last)
  }
  expect(eventsAfter(file, base.lastEvent, STAGE_EVENTS[stage]).length, `${stage} announced nothing`).toBeGreaterThan(0)
}

/** One POST the webhook endpoint received. */
export interface ReceivedDelivery {
  body: Buffer
  signature: string | undefined
  eventHeader: string | undefined
  deliveryHeader: string | undefined
}

/** A webhook endpoint on 127.0.0.1 (random port) in the test process; one URL path per database. */
export interface HookServer {
  secret: string
  url(tag: string): string
  /** the deliveries received on a tag's path since the last take, and forgets them */
  take(tag: string): ReceivedDelivery[]
  /**
   * Calls `then` (e.g. a SIGKILL of the sender) when the n-th POST on the tag arrives, and drops that
   * one, unanswered and not recorded: as if the sender died between claiming it and sending it.
   */
  stopAt(tag: string, n: number, then: () => void): void
  /** resolves once no connection is open (a sender that exited or was killed has been read to the end) */
  settle(): Promise<void>
  close(): Promise<void>
}

/** Webhook settings of the crash workspaces: short deadline and backoff, so a retry comes soon. */
const HOOK_SETTINGS = { timeoutMs: 2_000, maxAttempts: 5, backoffMs: 50, maxBackoffMs: 500 }

const hookTag = (db: string) => path.basename(db, '.db')

/** Starts the webhook endpoint: every POST is recorded under its path and answered 204. */
export async function startHookServer(secret = 'crash-test-webhook-secret'): Promise<HookServer> {
  const received = new Map<string, ReceivedDelivery[]>()
  const stops = new Map<string, { n: number; then: () => void }>()
  const sockets = new Set<Socket>()
  const header = (req: http.IncomingMessage, name: string) => {
    const v = req.headers[name]
    return Array.isArray(v) ? v.join(',') : v
  }
  const server = http.createServer((req, res) => {
    const chunks: Buffer[] = []
    req.on('data', (c: Buffer) => chunks.push(c))
    req.on('end', () => {
      const tag = (req.url ?? '/').slice(1)
      if (req.method === 'POST') {
        const list = received.get(tag) ?? []
        list.push({ body: Buffer.concat(chunks), signature: header(req, 'x-tides-signature'), eventHeader: header(req, 'x-tides-event'), deliveryHeader: header(req, 'x-tides-delivery') })
        received.set(tag, list)
        const stop = stops.get(tag)
        if (stop && list.length === stop.n) {
          stops.delete(tag)
          list.pop()
          stop.then()
          return
        }
      }
      // no keep-alive: a sender in this process (the claimed pass below) closes at once, for settle()
      res.writeHead(req.method === 'POST' ? 204 : 405, { Connection: 'close' }).end()
    })
  })
  server.on('connection', (s: Socket) => {
    sockets.add(s)
    s.on('close', () => sockets.delete(s))
  })
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(0, '127.0.0.1', resolve)
  })
  const { port } = server.address() as AddressInfo
  return {
    secret,
    url: (tag) => `http://127.0.0.1:${port}/${tag}`,
    take(tag) {
      const list = received.get(tag) ?? []
      received.delete(tag)
      return list
    },
    stopAt: (tag, n, then) => void stops.set(tag, { n, then }),
    settle: () => waitFor(() => sockets.size === 0, 10_000, 'the webhook senders to close their connections', 5),
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections()
        server.close(() => resolve())
      }),
  }
}

/**
 * Makes a database's webhook endpoint start after the base's last event (the crash and clean copies
 * are made from the base, which had no endpoint), so that only the events since the base are sent.
 */
function startHookAt(file: string, url: string, lastEvent: number): void {
  const db = new Database(file)
  try {
    setCursor(db, `webhook:${url}`, lastEvent)
  } finally {
    db.close()
  }
}

/**
 * Nothing delivered for work that rolled back: every delivery carries a valid signature (HMAC-SHA256
 * of the exact body, computed here, not by the sender's code) and its body is an event of the
 * database exactly as stored (id, type, created_at, payload). An event whose transaction rolled back
 * is not in the database, or its id was taken again by another event that differs from it.
 * @returns the ids of the events delivered
 */
export function expectDeliveredAsStored(file: string, deliveries: readonly ReceivedDelivery[], secret: string, what: string): Set<number> {
  const db = new Database(file, { readonly: true, fileMustExist: true })
  try {
    const stored = db.prepare('SELECT id, type, payload_json, created_at FROM events WHERE id = ?')
    const delivered = new Set<number>()
    for (const d of deliveries) {
      const text = d.body.toString('utf8')
      const expected = `sha256=${crypto.createHmac('sha256', secret).update(d.body).digest('hex')}`
      expect(d.signature, `${what}: signature of delivery ${text.slice(0, 100)}`).toBe(expected)
      const body = JSON.parse(text) as { id: number; type: string; createdAt: string; payload: unknown }
      const row = stored.get(body.id) as EventRow | undefined
      expect(row, `${what}: delivered event ${body.id} (${body.type}) is not in the database`).toBeDefined()
      expect(body, `${what}: delivered event ${body.id} differs from the stored one`).toStrictEqual({ id: row!.id, type: row!.type, createdAt: row!.created_at, payload: JSON.parse(row!.payload_json) })
      expect([d.eventHeader, d.deliveryHeader], `${what}: headers of delivery ${body.id}`).toEqual([row!.type, String(row!.id)])
      delivered.add(body.id)
    }
    return delivered
  } finally {
    db.close()
  }
}

/** Every event since the base was delivered (`excused`: ids that may still be waiting). */
export function expectAllDelivered(file: string, delivered: ReadonlySet<number>, base: Baseline, what: string, excused: ReadonlySet<number> = new Set()): number[] {
  const missing = query<{ id: number; type: string }>(file, 'SELECT id, type FROM events WHERE id > ? ORDER BY id', base.lastEvent).filter((e) => !delivered.has(e.id))
  expect(
    missing.filter((e) => !excused.has(e.id)).map((e) => `${e.id} ${e.type}`),
    `${what}: events never delivered`,
  ).toEqual([])
  return missing.map((e) => e.id)
}

/**
 * Deliveries the killed run had claimed (lease running past the moment of the kill): a kill in the
 * middle of an attempt leaves its row claimed for timeoutMs + 5 s, and the restart may end before
 * the claim runs out. At-least-once allows that; the next pass after the lease delivers them.
 */
function claimedAt(file: string, killedAt: string): Set<number> {
  return new Set(query<{ event_id: number }>(file, "SELECT event_id FROM webhook_deliveries WHERE status = 'pending' AND next_attempt_at > ?", killedAt).map((r) => r.event_id))
}

export interface CrashSetup {
  stage: CrashStage
  /** the database with the stage's input in place and nothing of the stage done */
  base: string
  /** results of `run all` from the base without a kill */
  cleanHash: string
  /** the clean database (kept for comparison when a kill goes wrong) */
  clean: string
  /** how long the stage worked in the clean run */
  workMs: number
  /** the webhook endpoint of every run */
  hooks: HookServer
}

/** Runs `tides` and fails the test with its stderr when it does not exit 0. */
async function ok(ws: Workspace, args: string[], env?: NodeJS.ProcessEnv): Promise<void> {
  const r = await tides([...ws.args, ...args], { env })
  expect(r.code, `tides ${args.join(' ')}: ${r.stderr}`).toBe(0)
}

/**
 * Points the workspace's config at another database file; with `hooks`, a webhook endpoint of
 * its own (a path named after the database) on the test's server.
 */
export function useDb(ws: Workspace, db: string, hooks?: HookServer): Workspace {
  const config = JSON.parse(fs.readFileSync(ws.config, 'utf8')) as Record<string, unknown>
  const file = path.join(ws.dir, `${path.basename(db, '.db')}.config.json`)
  const webhooks = hooks ? [{ url: hooks.url(hookTag(db)), secret: hooks.secret, ...HOOK_SETTINGS }] : []
  fs.writeFileSync(file, JSON.stringify({ ...config, db: path.resolve(db), webhooks }))
  return { ...ws, db, config: file, args: ['--config', file] }
}

/**
 * The input of each crash stage, made once: a fresh database (`prepare` runs on it, e.g. imports),
 * then the built stages run one by one (`run STAGE --only`), the database copied before each.
 * @returns the base database of each built stage among ingest, map, fit and plan
 */
export async function prepareBases(ws: Workspace, prepare: (w: Workspace) => Promise<void> = async () => {}): Promise<Partial<Record<CrashStage, string>>> {
  const bases: Partial<Record<CrashStage, string>> = {}
  const work = path.join(ws.dir, 'progress.db')
  for (const f of [work, `${work}-wal`, `${work}-shm`]) fs.rmSync(f, { force: true })
  openDb(work).close()
  const w = useDb(ws, work)
  await prepare(w)
  for (const stage of ['ingest', 'map', 'fit', 'ability', 'plan'] as const) {
    if (!findStage(stage)) continue
    if (stage !== 'ability') {
      bases[stage] = path.join(ws.dir, `base-${stage}.db`)
      copyDb(work, bases[stage])
    }
    if (stage !== 'plan') await ok(w, ['run', stage, '--only'])
  }
  return bases
}

/**
 * The clean reference of a stage: `run all` from its base without a kill, its webhook deliveries
 * checked (each as stored and signed, every event since the base delivered); the stage's working
 * time is read from its job run in that run.
 */
export async function setUpCrash(ws: Workspace, stage: CrashStage, base: string, hooks: HookServer): Promise<CrashSetup> {
  const clean = useDb(ws, path.join(ws.dir, `clean-${stage}.db`), hooks)
  copyDb(base, clean.db)
  const baseline = baselineOf(base)
  startHookAt(clean.db, hooks.url(hookTag(clean.db)), baseline.lastEvent)
  await ok(clean, ['run', 'all'])
  await hooks.settle()
  const delivered = expectDeliveredAsStored(clean.db, hooks.take(hookTag(clean.db)), hooks.secret, `clean run of ${stage}`)
  expectAllDelivered(clean.db, delivered, baseline, `clean run of ${stage}`)
  const [timing] = query<{ ms: number }>(
    clean.db,
    "SELECT MAX((julianday(ended_at) - julianday(started_at)) * 86400000) AS ms FROM job_runs WHERE stage = ? AND status IN ('ok', 'partial')",
    stage,
  )
  return { stage, base, cleanHash: resultHash(clean.db), clean: clean.db, workMs: Math.max(1, timing?.ms ?? 1), hooks }
}

export interface CrashOutcome {
  /** true when the kill landed while the stage's run was still open (not yet recorded as ended) */
  interrupted: boolean
  delayMs: number
}

/**
 * Tries per kill. A kill that came too late (the stage had finished) is tried again: the first try
 * waits a random part of the stage's clean working time, the second a quarter of that, the later
 * ones none (the kill follows the job run's record within a few milliseconds), so that a short
 * stage (plan works about 70 ms on the npm-test corpus) is still caught while it works.
 */
const ATTEMPTS = 5

function attemptDelay(attempt: number, fraction: number, workMs: number): number {
  if (attempt >= 2) return 0
  return Math.floor(fraction * workMs * (attempt === 0 ? 1 : 0.25))
}

/** What a kill left, for the restart's checks. */
interface Killed {
  /** the stage's job runs the kill left open */
  open: { id: number }[]
  /** what the killed run delivered to the webhook */
  deliveries: ReceivedDelivery[]
  /** deliveries the killed run had claimed (claimedAt) */
  claimed: Set<number>
  /** names the kill in messages */
  label: string
}

/**
 * One kill: copies the base, starts `run STAGE --only`, waits until the stage records its running
 * job, sleeps a random part of its clean working time, SIGKILLs it, checks the database as the kill
 * left it (and what the killed run delivered to the webhook), then restarts with `run all` and
 * compares results and events with the clean run and the deliveries with the final database.
 */
export async function crashOnce(ws: Workspace, setup: CrashSetup, random: () => number, index: number): Promise<CrashOutcome> {
  const { hooks } = setup
  const w = useDb(ws, path.join(ws.dir, `crash-${setup.stage}-${index}.db`), hooks)
  const tag = hookTag(w.db)
  const fraction = random()
  let delayMs = 0
  const baseline = baselineOf(setup.base)
  const killed: Killed = { open: [], deliveries: [], claimed: new Set(), label: '' }
  await keepEvidence(w, setup, async () => {
    for (let attempt = 0; attempt < ATTEMPTS; attempt++) {
      copyDb(setup.base, w.db)
      startHookAt(w.db, hooks.url(tag), baseline.lastEvent)
      const before = query<{ id: number }>(w.db, 'SELECT COALESCE(MAX(id), 0) AS id FROM job_runs')[0]!.id
      const child = startTides([...w.args, 'run', setup.stage, '--only'])
      // the stage has started once its job run is recorded (and committed); one open connection polls
      const watch = new Database(w.db, { readonly: true })
      try {
        const running = watch.prepare("SELECT 1 FROM job_runs WHERE id > ? AND stage = ? AND status = 'running'")
        while (child.child.exitCode === null && running.get(before, setup.stage) === undefined) await sleep(2)
      } finally {
        watch.close()
      }
      delayMs = attemptDelay(attempt, fraction, setup.workMs)
      await sleep(delayMs)
      const alive = child.child.exitCode === null
      const killedAt = new Date().toISOString()
      child.child.kill('SIGKILL')
      const end = await child.done
      if (alive) expect(end.signal).toBe('SIGKILL')
      else expect(end.code, end.stderr).toBe(0)
      killed.label = `a kill at ${delayMs} ms of ${setup.stage}`
      await checkKilled(w.db, setup, baseline, killedAt, killed)
      killed.open = query<{ id: number }>(w.db, "SELECT id FROM job_runs WHERE id > ? AND stage = ? AND status = 'running'", before, setup.stage)
      if (killed.open.length > 0) break
    }
    await restartAndCompare(w, setup, baseline, killed)
  })
  return { interrupted: killed.open.length > 0, delayMs }
}

/**
 * The event types a stage's own run emits, to place a kill in the delivery pass of that run.
 */
const OWN_EVENTS: Record<CrashStage, string[]> = {
  ingest: ['documents.ingested'],
  map: ['documents.mapped'],
  fit: ['curves.fitted', 'skill.state-changed'],
  plan: ['plan.updated', 'course.flagged'],
}

/**
 * A kill in the webhook delivery pass: `run STAGE --only` finishes the stage, releases the lock and
 * delivers; the endpoint has the process killed when the middle one of the stage's deliveries
 * arrives and drops that one (HookServer.stopAt): the ones before it are marked delivered, its row
 * stays claimed for the claim's lease, the ones after it pending. The restart must deliver the
 * pending ones, the pass after the lease the claimed one, and results and events must be those of a
 * clean run.
 */
export async function crashInDelivery(ws: Workspace, setup: CrashSetup, index: number): Promise<void> {
  const { hooks } = setup
  const w = useDb(ws, path.join(ws.dir, `crash-${setup.stage}-delivery-${index}.db`), hooks)
  const tag = hookTag(w.db)
  const baseline = baselineOf(setup.base)
  const types = OWN_EVENTS[setup.stage]
  const own = query<{ n: number }>(setup.clean, `SELECT COUNT(*) AS n FROM events WHERE id > ? AND type IN (${types.map(() => '?').join(', ')})`, baseline.lastEvent, ...types)[0]!.n
  const nth = Math.max(1, Math.ceil(own / 2))
  const killed: Killed = { open: [], deliveries: [], claimed: new Set(), label: `a kill at delivery ${nth} of ${own} after ${setup.stage}` }
  await keepEvidence(w, setup, async () => {
    copyDb(setup.base, w.db)
    startHookAt(w.db, hooks.url(tag), baseline.lastEvent)
    const before = query<{ id: number }>(w.db, 'SELECT COALESCE(MAX(id), 0) AS id FROM job_runs')[0]!.id
    let killedAt = ''
    const child = startTides([...w.args, 'run', setup.stage, '--only'])
    hooks.stopAt(tag, nth, () => {
      killedAt = new Date().toISOString()
      child.child.kill('SIGKILL')
    })
    const end = await child.done
    expect(end.signal, `${killed.label}: the run ended before its ${nth}th delivery (${end.stderr})`).toBe('SIGKILL')
    await checkKilled(w.db, setup, baseline, killedAt, killed)
    expect(killed.deliveries.length, `${killed.label}: deliveries received`).toBe(nth - 1)
    // the stage's run had ended: the kill came after the work, in the delivery pass
    expect(query(w.db, "SELECT id FROM job_runs WHERE id > ? AND stage = ? AND status = 'running'", before, setup.stage)).toEqual([])
    await restartAndCompare(w, setup, baseline, killed)
  })
}

/**
 * The checks of the database as a kill left it: integrity, every event backed by work, and what the
 * killed run delivered (it gets that far only after the stage finished) each an event the database
 * holds as it was sent. Records the deliveries and claims in `killed`.
 */
async function checkKilled(file: string, setup: CrashSetup, baseline: Baseline, killedAt: string, killed: Killed): Promise<void> {
  expect(integrity(file)).toBe('ok')
  expectEventsBackedByWork(file, baseline)
  await setup.hooks.settle()
  killed.deliveries = setup.hooks.take(hookTag(file))
  expectDeliveredAsStored(file, killed.deliveries, setup.hooks.secret, `deliveries of the killed run (${killed.label})`)
  killed.claimed = claimedAt(file, killedAt)
}

/**
 * The restart after a kill and its checks: `run all` closes the killed run as interrupted and
 * finishes the work; then integrity, results equal to the clean run, every event backed by work and
 * none pending, the events since the base summed up as the clean run's (eventSummary), and the
 * deliveries of the killed run and the restart each an event of the final database as sent, every
 * event since the base delivered.
 */
async function restartAndCompare(w: Workspace, setup: CrashSetup, baseline: Baseline, killed: Killed): Promise<void> {
  const { hooks } = setup
  const tag = hookTag(w.db)
  // keep the database as the kill left it, in case a check below fails
  copyDb(w.db, `${w.db}.killed`)
  const restart = await tides([...w.args, 'run', 'all'])
  expect(restart.code, restart.stderr).toBe(0)
  await hooks.settle()
  const restartDeliveries = hooks.take(tag)
  expect(integrity(w.db)).toBe('ok')
  for (const { id } of killed.open) {
    expect(query(w.db, 'SELECT status, error FROM job_runs WHERE id = ?', id)[0]).toMatchObject({ status: 'failed', error: expect.stringMatching(/interrupted/) })
  }
  // a kill inside a bulk map leaves the mentions-by-concept index dropped; the restart builds it
  expect(query(w.db, "SELECT name FROM sqlite_master WHERE type = 'index' AND name = 'mentions_concept'")).toHaveLength(1)
  expect(resultHash(w.db), `results after ${killed.label} (tables that differ: ${changedTables(setup.clean, w.db).join(', ')})`).toBe(setup.cleanHash)
  expectEventsBackedByWork(w.db, baseline)
  expectNothingPending(w.db, setup.stage, baseline)
  expect(eventSummary(w.db, baseline), `events since the base after ${killed.label}, against the clean run`).toEqual(eventSummary(setup.clean, baseline))
  const what = `deliveries after ${killed.label}`
  const delivered = expectDeliveredAsStored(w.db, [...killed.deliveries, ...restartDeliveries], hooks.secret, what)
  const waiting = expectAllDelivered(w.db, delivered, baseline, what, killed.claimed)
  if (waiting.length > 0) {
    // only deliveries a kill interrupted mid-attempt may wait: the pass after their claim has run
    // out (here, with the clock moved past it) must deliver them
    const db = new Database(w.db)
    try {
      const hook: WebhookConfig = { url: hooks.url(tag), secret: hooks.secret, events: [], ...HOOK_SETTINGS }
      await deliverWebhooks(db, { webhooks: [hook] }, { now: () => Date.now() + HOOK_SETTINGS.timeoutMs + 60_000 })
    } finally {
      db.close()
    }
    await hooks.settle()
    for (const id of expectDeliveredAsStored(w.db, hooks.take(tag), hooks.secret, `${what}, claimed ones`)) delivered.add(id)
    expectAllDelivered(w.db, delivered, baseline, `${what}, claimed ones`)
  }
}

/** Runs the checks of one kill; on failure keeps the databases and names their folder, on success removes them. */
async function keepEvidence(w: Workspace, setup: CrashSetup, checks: () => Promise<void>): Promise<void> {
  const { db } = w
  try {
    await checks()
  } catch (err) {
    // keep the evidence: the killed and restarted databases and the clean one
    const keep = fs.mkdtempSync(path.join(os.tmpdir(), `tides-crash-failure-${setup.stage}-`))
    for (const f of [db, `${db}.killed`, setup.clean, setup.base]) if (fs.existsSync(f)) copyDb(f, path.join(keep, path.basename(f)))
    throw new Error(`${(err as Error).message}\n(databases kept in ${keep})`, { cause: err })
  }
  for (const f of [db, `${db}-wal`, `${db}-shm`, `${db}.killed`, w.config]) fs.rmSync(f, { force: true })
}

/** A seeded uniform random number generator (mulberry32) for kill times. */
export function seeded(seed: number): () => number {
  let s = seed >>> 0
  return () => {
    let t = (s = (s + 0x6d2b79f5) >>> 0)
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}
