/**
 * @module db/runs
 * Job runs (one row per stage or source run) and the pipeline lock with a lease.
 */
import type { Db } from './connection.ts'

export interface RunCounts {
  read?: number
  new?: number
  duplicate?: number
  rejected?: number
}

export interface JobRun {
  id: number
  stage: string
  source_id: string | null
  trigger: string
  started_at: string
  ended_at: string | null
  status: 'running' | 'ok' | 'failed' | 'partial'
  read: number
  new: number
  duplicate: number
  rejected: number
  error: string | null
  details_json: string
}

/** Records the start of a run; returns its id. */
export function startRun(db: Db, stage: string, trigger = 'manual', sourceId: string | null = null): number {
  const info = db
    .prepare('INSERT INTO job_runs(stage, source_id, trigger, started_at) VALUES (?, ?, ?, ?)')
    .run(stage, sourceId, trigger, new Date().toISOString())
  return Number(info.lastInsertRowid)
}

/** Records the end of a run with its counts, error and details. */
export function finishRun(
  db: Db,
  id: number,
  status: 'ok' | 'failed' | 'partial',
  counts: RunCounts = {},
  error: string | null = null,
  details: unknown = {},
): void {
  db.prepare(
    `UPDATE job_runs SET ended_at = ?, status = ?, read = ?, new = ?, duplicate = ?, rejected = ?, error = ?, details_json = ?
     WHERE id = ?`,
  ).run(
    new Date().toISOString(),
    status,
    counts.read ?? 0,
    counts.new ?? 0,
    counts.duplicate ?? 0,
    counts.rejected ?? 0,
    error,
    JSON.stringify(details),
    id,
  )
}

/** Runs still marked running whose process died are closed as failed (called at start). */
export function closeAbandonedRuns(db: Db): number {
  return db
    .prepare("UPDATE job_runs SET status = 'failed', ended_at = ?, error = 'interrupted (process ended before the run finished)' WHERE status = 'running'")
    .run(new Date().toISOString()).changes
}

/** The latest runs, newest first. */
export function listRuns(db: Db, limit = 50, stage?: string): JobRun[] {
  if (stage) return db.prepare('SELECT * FROM job_runs WHERE stage = ? ORDER BY id DESC LIMIT ?').all(stage, limit) as JobRun[]
  return db.prepare('SELECT * FROM job_runs ORDER BY id DESC LIMIT ?').all(limit) as JobRun[]
}

/** The latest run of each stage (and source). */
export function latestRuns(db: Db): JobRun[] {
  return db
    .prepare(
      `SELECT r.* FROM job_runs r JOIN (SELECT MAX(id) AS id FROM job_runs GROUP BY stage, source_id) m ON m.id = r.id ORDER BY r.stage, r.source_id`,
    )
    .all() as JobRun[]
}

export interface LockHolder {
  holder: string
  pid: number
  expires_at: number
}

/**
 * Takes the named lock if it is free, expired, or held by a process that no longer exists.
 * @returns null when taken, else the current holder
 */
export function tryLock(db: Db, name: string, holder: string, leaseMs: number, isAlive: (pid: number) => boolean): LockHolder | null {
  const take = db.transaction((): LockHolder | null => {
    const now = Date.now()
    const row = db.prepare('SELECT holder, pid, expires_at FROM locks WHERE name = ?').get(name) as LockHolder | undefined
    if (row && row.holder !== holder && row.expires_at > now && isAlive(row.pid)) return row
    db.prepare(
      'INSERT INTO locks(name, holder, pid, expires_at) VALUES (?, ?, ?, ?) ON CONFLICT(name) DO UPDATE SET holder = excluded.holder, pid = excluded.pid, expires_at = excluded.expires_at',
    ).run(name, holder, process.pid, now + leaseMs)
    return null
  })
  return take.immediate()
}

/** The current holder of a lock, or null when nobody holds it. */
export function lockHolder(db: Db, name: string): LockHolder | null {
  return (db.prepare('SELECT holder, pid, expires_at FROM locks WHERE name = ?').get(name) as LockHolder | undefined) ?? null
}

/** Extends the lease of a lock this holder owns (false when the lock is no longer this holder's). */
export function renewLock(db: Db, name: string, holder: string, leaseMs: number): boolean {
  return db.prepare('UPDATE locks SET expires_at = ? WHERE name = ? AND holder = ?').run(Date.now() + leaseMs, name, holder).changes === 1
}

/** Releases a lock this holder owns. */
export function releaseLock(db: Db, name: string, holder: string): void {
  db.prepare('DELETE FROM locks WHERE name = ? AND holder = ?').run(name, holder)
}

/** What a stage's last successful run was computed from (migration 12): the ability and fit stages skip while it holds. */
export interface StageMark {
  /** the stage's input counter: the ability inputs' counter read after its own writes; the demand version the fit read */
  inputs: number
  /** the UTC day (YYYY-MM-DD) it judged staleness by ('' for the fit, which does not depend on the day) */
  day: string
  /** hash of its config section */
  configHash: string
  counts: Record<string, number>
  /** when the run stored it */
  updatedAt: string
}

export function readStageMark(db: Db, stage: string): StageMark | null {
  const row = db.prepare('SELECT inputs, day, config_hash, counts_json, updated_at FROM stage_marks WHERE stage = ?').get(stage) as
    | { inputs: number; day: string; config_hash: string; counts_json: string; updated_at: string }
    | undefined
  if (!row) return null
  return { inputs: row.inputs, day: row.day, configHash: row.config_hash, counts: JSON.parse(row.counts_json) as Record<string, number>, updatedAt: row.updated_at }
}

/** Store a stage's mark; call it in the transaction of the results it describes. */
export function writeStageMark(db: Db, stage: string, mark: StageMark): void {
  db.prepare(
    `INSERT INTO stage_marks(stage, inputs, day, config_hash, counts_json, updated_at) VALUES (?, ?, ?, ?, ?, ?)
     ON CONFLICT(stage) DO UPDATE SET inputs = excluded.inputs, day = excluded.day, config_hash = excluded.config_hash,
       counts_json = excluded.counts_json, updated_at = excluded.updated_at`,
  ).run(stage, mark.inputs, mark.day, mark.configHash, JSON.stringify(mark.counts), mark.updatedAt)
}
