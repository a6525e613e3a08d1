/**
 * Crash-safety harness, shared by the fast test (a few kills) and the soak run (many): a stage is
 * started in its own process (`tides run STAGE --only`) and killed with SIGKILL at a random point
 * while it works; then `tides run all` finishes the job. The database must pass
 * `PRAGMA integrity_check` right after the kill, every event left in the outbox must announce work
 * that is really there (nothing announced for rolled-back work), and after the restart the results
 * must equal those of `run all` without the kill, with every subscribed stage past every event of its
 * types (no event lost). When a check fails, the databases are kept and their folder named.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { expect } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { findStage } from '../../src/stages.ts'
import { COUNT_MAPPED } from '../../src/db/taxonomy.ts'
import { changedTables, copyDb, integrity, query, resultHash, sleep, startTides, tides, type Workspace } from './helpers.ts'

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
}

function eventsAfter(file: string, after: number, type: string): (EventRow & { p: Record<string, unknown> })[] {
  return query<EventRow>(file, 'SELECT id, type, payload_json FROM events WHERE id > ? AND type = ? ORDER BY id', after, type).map((e) => ({ ...e, p: JSON.parse(e.payload_json) as Record<string, unknown> }))
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
 * Nothing announced for work that rolled back: every event written since the base is backed by
 * stored work. documents.ingested: its range of document ids is stored with the counts it states.
 * documents.mapped (counts cumulative within a run): the largest count announced does not exceed
 * the documents mapped since the base. curves.fitted: the curves table holds the skills it states.
 * plan.updated: the stored needs ranking has the length it states.
 */
export function expectEventsBackedByWork(file: string, base: Baseline = { lastEvent: 0, mapped: 0 }): void {
  for (const { p } of eventsAfter(file, base.lastEvent, 'documents.ingested')) {
    const { firstId, lastId } = p as { firstId?: number; lastId?: number }
    if (firstId === undefined || lastId === undefined) continue
    const [row] = query<{ n: number }>(file, 'SELECT COUNT(*) AS n FROM documents WHERE id BETWEEN ? AND ?', firstId, lastId)
    expect(row!.n, `documents ${firstId}..${lastId} announced as ingested`).toBe(Number(p['new'] ?? 0) + Number(p['duplicate'] ?? 0))
  }
  const mapped = eventsAfter(file, base.lastEvent, 'documents.mapped').map((e) => Number(e.p['mapped'] ?? 0))
  if (mapped.length) {
    const now = query<{ n: number }>(file, COUNT_MAPPED)[0]!.n
    // runs restart their count: the sum of each run's last (largest) count is what was announced
    let announced = 0
    mapped.forEach((m, i) => {
      if (i === mapped.length - 1 || mapped[i + 1]! <= m) announced += m
    })
    expect(announced, 'documents announced as mapped').toBeLessThanOrEqual(now - base.mapped)
  }
  const fitted = eventsAfter(file, base.lastEvent, 'curves.fitted').at(-1)
  if (fitted) expect(query<{ n: number }>(file, 'SELECT COUNT(*) AS n FROM curves')[0]!.n, 'curves announced as fitted').toBe(Number(fitted.p['skills']))
  const planned = eventsAfter(file, base.lastEvent, 'plan.updated').at(-1)
  if (planned) expect(query<{ n: number }>(file, "SELECT COUNT(*) AS n FROM plan_outputs WHERE kind = 'need'")[0]!.n, 'needs announced as ranked').toBe(Number(planned.p['needs']))
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
}

/** Runs `tides` and fails the test with its stderr when it does not exit 0. */
async function ok(ws: Workspace, args: string[], env?: NodeJS.ProcessEnv): Promise<void> {
  const r = await tides([...ws.args, ...args], { env })
  expect(r.code, `tides ${args.join(' ')}: ${r.stderr}`).toBe(0)
}

/** Points the workspace's config at another database file. */
export function useDb(ws: Workspace, db: string): Workspace {
  const config = JSON.parse(fs.readFileSync(ws.config, 'utf8')) as Record<string, unknown>
  const file = path.join(ws.dir, `${path.basename(db, '.db')}.config.json`)
  fs.writeFileSync(file, JSON.stringify({ ...config, db: path.resolve(db) }))
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
 * The clean reference of a stage: `run all` from its base without a kill; the stage's working time
 * is read from its job run in that run.
 */
export async function setUpCrash(ws: Workspace, stage: CrashStage, base: string): Promise<CrashSetup> {
  const clean = useDb(ws, path.join(ws.dir, `clean-${stage}.db`))
  copyDb(base, clean.db)
  await ok(clean, ['run', 'all'])
  const [timing] = query<{ ms: number }>(
    clean.db,
    "SELECT MAX((julianday(ended_at) - julianday(started_at)) * 86400000) AS ms FROM job_runs WHERE stage = ? AND status IN ('ok', 'partial')",
    stage,
  )
  return { stage, base, cleanHash: resultHash(clean.db), clean: clean.db, workMs: Math.max(1, timing?.ms ?? 1) }
}

export interface CrashOutcome {
  /** true when the kill landed while the stage's run was still open (not yet recorded as ended) */
  interrupted: boolean
  delayMs: number
}

/**
 * One kill: copies the base, starts `run STAGE --only`, waits until the stage records its running
 * job, sleeps a random part of its clean working time, SIGKILLs it, checks the database as the kill
 * left it, then restarts with `run all` and compares with the clean run.
 */
export async function crashOnce(ws: Workspace, setup: CrashSetup, random: () => number, index: number): Promise<CrashOutcome> {
  const w = useDb(ws, path.join(ws.dir, `crash-${setup.stage}-${index}.db`))
  const fraction = random()
  let delayMs = 0
  let open: { id: number }[] = []
  let before = 0
  const baseline = baselineOf(setup.base)
  try {
    // a kill that comes too late (the stage had finished) is tried again sooner, up to three times
    for (let attempt = 0; attempt < 3; attempt++) {
      copyDb(setup.base, w.db)
      before = query<{ id: number }>(w.db, 'SELECT COALESCE(MAX(id), 0) AS id FROM job_runs')[0]!.id
      const child = startTides([...w.args, 'run', setup.stage, '--only'])
      // the stage has started once its job run is recorded (and committed); one open connection polls
      const watch = new Database(w.db, { readonly: true })
      try {
        const running = watch.prepare("SELECT 1 FROM job_runs WHERE id > ? AND stage = ? AND status = 'running'")
        while (child.child.exitCode === null && running.get(before, setup.stage) === undefined) await sleep(2)
      } finally {
        watch.close()
      }
      delayMs = attempt === 2 ? 0 : Math.floor(fraction * setup.workMs * (attempt === 0 ? 1 : 0.25))
      await sleep(delayMs)
      const alive = child.child.exitCode === null
      child.child.kill('SIGKILL')
      const end = await child.done
      if (alive) expect(end.signal).toBe('SIGKILL')
      else expect(end.code, end.stderr).toBe(0)

      expect(integrity(w.db)).toBe('ok')
      expectEventsBackedByWork(w.db, baseline)
      open = query<{ id: number }>(w.db, "SELECT id FROM job_runs WHERE id > ? AND stage = ? AND status = 'running'", before, setup.stage)
      if (open.length > 0) break
    }
    // keep the database as the kill left it, in case a check below fails
    copyDb(w.db, `${w.db}.killed`)
    // the next start closes the killed run as interrupted, and finishes the work
    const restart = await tides([...w.args, 'run', 'all'])
    expect(restart.code, restart.stderr).toBe(0)
    expect(integrity(w.db)).toBe('ok')
    for (const { id } of open) {
      expect(query(w.db, 'SELECT status, error FROM job_runs WHERE id = ?', id)[0]).toMatchObject({ status: 'failed', error: expect.stringMatching(/interrupted/) })
    }
    // a kill inside a bulk map leaves the mentions-by-concept index dropped; the restart builds it
    expect(query(w.db, "SELECT name FROM sqlite_master WHERE type = 'index' AND name = 'mentions_concept'")).toHaveLength(1)
    expect(resultHash(w.db), `results after a kill at ${delayMs} ms of ${setup.stage} (tables that differ: ${changedTables(setup.clean, w.db).join(', ')})`).toBe(setup.cleanHash)
    expectEventsBackedByWork(w.db, baseline)
    expectNothingPending(w.db, setup.stage, baseline)
  } catch (err) {
    // keep the evidence: the killed and restarted databases and the clean one
    const keep = fs.mkdtempSync(path.join(os.tmpdir(), `tides-crash-failure-${setup.stage}-`))
    for (const f of [w.db, `${w.db}.killed`, setup.clean, setup.base]) if (fs.existsSync(f)) copyDb(f, path.join(keep, path.basename(f)))
    throw new Error(`${(err as Error).message}\n(databases kept in ${keep})`, { cause: err })
  }
  for (const f of [w.db, `${w.db}-wal`, `${w.db}-shm`, `${w.db}.killed`, w.config]) fs.rmSync(f, { force: true })
  return { interrupted: open.length > 0, delayMs }
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
