/**
 * Crash-safety harness, shared by the fast test (a few kills) and the soak run (many): a stage is
 * started in its own process (`tides run STAGE --only`) and killed with SIGKILL at a random point
 * while it works; then `tides run all` finishes the job. The database must pass
 * `PRAGMA integrity_check` right after the kill, every event left in the outbox must announce work
 * that is really there, and after the restart the results must equal those of `run all` without the
 * kill, with no event lost and none announced that such a clean run does not announce.
 */
import fs from 'node:fs'
import path from 'node:path'
import Database from 'better-sqlite3'
import { expect } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { findStage } from '../../src/stages.ts'
import { copyDb, integrity, query, resultHash, sleep, startTides, tides, type Workspace } from './helpers.ts'

export type CrashStage = 'ingest' | 'map' | 'fit' | 'plan'

/** The stages that must have run before `stage` has its input (in pipeline order, built ones only). */
export function stagesBefore(stage: CrashStage): string[] {
  const order = ['ingest', 'map', 'fit', 'ability']
  const upTo = stage === 'plan' ? order.length : order.indexOf(stage)
  return order.slice(0, upTo).filter((s) => findStage(s))
}

interface EventRow {
  type: string
  payload_json: string
}

/** Events without what differs between two runs of the same work (run ids, times, durations). */
export function normalisedEvents(file: string): string[] {
  const rows = query<EventRow>(file, 'SELECT type, payload_json FROM events ORDER BY id')
  const strip = (v: unknown): unknown => {
    if (Array.isArray(v)) return v.map(strip)
    if (v && typeof v === 'object') {
      return Object.fromEntries(
        Object.entries(v as Record<string, unknown>)
          .filter(([k]) => !/^(runId|at|ms|seconds|trigger)$|At$|Ms$/.test(k))
          .map(([k, x]) => [k, strip(x)]),
      )
    }
    return v
  }
  return rows.map((r) => `${r.type} ${JSON.stringify(strip(JSON.parse(r.payload_json)))}`).sort()
}

/**
 * Checks that every event in the outbox announces work that is there: each documents.ingested
 * range of document ids is stored with the counts it states.
 */
export function expectEventsBackedByWork(file: string): void {
  for (const e of query<EventRow>(file, "SELECT type, payload_json FROM events WHERE type = 'documents.ingested'")) {
    const p = JSON.parse(e.payload_json) as { firstId?: number; lastId?: number; new?: number; duplicate?: number }
    if (p.firstId === undefined || p.lastId === undefined) continue
    const [row] = query<{ n: number; dup: number }>(file, 'SELECT COUNT(*) AS n, COUNT(duplicate_of) AS dup FROM documents WHERE id BETWEEN ? AND ?', p.firstId, p.lastId)
    expect(row!.n, `documents ${p.firstId}..${p.lastId} announced`).toBe((p.new ?? 0) + (p.duplicate ?? 0))
  }
  for (const e of query<EventRow>(file, "SELECT type, payload_json FROM events WHERE type = 'documents.mapped'")) {
    const p = JSON.parse(e.payload_json) as { firstId?: number; lastId?: number }
    if (p.firstId === undefined || p.lastId === undefined) continue
    const [row] = query<{ n: number }>(file, 'SELECT COUNT(*) AS n FROM documents WHERE id BETWEEN ? AND ? AND mapped_version IS NULL', p.firstId, p.lastId)
    expect(row!.n, `documents ${p.firstId}..${p.lastId} announced as mapped`).toBe(0)
  }
}

export interface CrashSetup {
  stage: CrashStage
  /** the database with the stage's input in place and nothing of the stage done */
  base: string
  /** results and events of `run all` from the base without a kill */
  cleanHash: string
  cleanEvents: string[]
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
  return { stage, base, cleanHash: resultHash(clean.db), cleanEvents: normalisedEvents(clean.db), workMs: Math.max(1, timing?.ms ?? 1) }
}

/**
 * No event lost: every event of the clean run is there (as often). Nothing announced that the clean
 * run did not announce: an extra event may only repeat one of the clean run's (delivery is at least
 * once: a stage killed after its commit runs again), never state anything else.
 */
export function expectSameAnnouncements(got: string[], clean: string[], what: string): void {
  const left = new Map<string, number>()
  for (const e of got) left.set(e, (left.get(e) ?? 0) + 1)
  const missing: string[] = []
  for (const e of clean) {
    const n = left.get(e) ?? 0
    if (n === 0) missing.push(e)
    else left.set(e, n - 1)
  }
  const known = new Set(clean)
  const foreign = [...left.entries()].filter(([e, n]) => n > 0 && !known.has(e)).map(([e]) => e)
  expect(missing, `events lost ${what}`).toEqual([])
  expect(foreign, `events announced ${what} that a clean run never announces`).toEqual([])
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
    expectEventsBackedByWork(w.db)
    open = query<{ id: number }>(w.db, "SELECT id FROM job_runs WHERE id > ? AND stage = ? AND status = 'running'", before, setup.stage)
    if (open.length > 0) break
  }
  // the next start closes the killed run as interrupted, and finishes the work
  const restart = await tides([...w.args, 'run', 'all'])
  expect(restart.code, restart.stderr).toBe(0)
  expect(integrity(w.db)).toBe('ok')
  for (const { id } of open) {
    expect(query(w.db, 'SELECT status, error FROM job_runs WHERE id = ?', id)[0]).toMatchObject({ status: 'failed', error: expect.stringMatching(/interrupted/) })
  }
  expect(resultHash(w.db), `results after a kill at ${delayMs} ms of ${setup.stage}`).toBe(setup.cleanHash)
  expectSameAnnouncements(normalisedEvents(w.db), setup.cleanEvents, `after a kill at ${delayMs} ms of ${setup.stage}`)
  for (const f of [w.db, `${w.db}-wal`, `${w.db}-shm`, w.config]) fs.rmSync(f, { force: true })
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
