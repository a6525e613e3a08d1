/**
 * @module lock
 * The pipeline lock: one run (or import) at a time works on the pipeline's tables. A row in `locks`
 * with a lease; a holder that died is taken over at once (its process is gone), one that is alive but
 * stopped or stuck once its lease runs out unrenewed.
 */
import crypto from 'node:crypto'
import type { Db } from './db/connection.ts'
import { lockHolder, releaseLock, renewLock, tryLock } from './db/runs.ts'
import { BusyError, LockLostError } from './errors.ts'

export const PIPELINE_LOCK = 'pipeline'
/** the pipeline lock's lease: renewed every third of it while the holder's event loop turns */
export const LEASE_MS = 60_000

/** The held pipeline lock, as the work under it sees it. */
export interface LockLease {
  /**
   * Renews the lease now. Called before each stage: a stage that keeps the event loop busy longer
   * than the renewal timer's period still renews at its end.
   * @throws LockLostError when the lease ran out unrenewed and another run has taken the lock
   */
  keep(before: string): void
}

function isAlive(pid: number): boolean {
  if (pid === process.pid) return true
  try {
    process.kill(pid, 0)
    return true
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === 'EPERM'
  }
}

/**
 * Runs `fn` while holding the pipeline lock. The lease is renewed every third of `leaseMs` by a timer
 * and by `lease.keep()` between stages; if it ever runs out unrenewed (the process was stopped, or
 * its event loop blocked for longer than the lease) another run may take the lock over, and the
 * next `keep()` then throws LockLostError instead of letting two runs work at once. Releasing
 * removes the lock only while it is still this run's.
 * @throws BusyError when another live process holds it past `waitMs`
 */
export async function withPipelineLock<T>(db: Db, fn: (lease: LockLease) => Promise<T>, waitMs = 0, leaseMs = LEASE_MS): Promise<T> {
  const holder = `${process.pid}:${crypto.randomUUID()}`
  const deadline = Date.now() + waitMs
  for (;;) {
    const current = tryLock(db, PIPELINE_LOCK, holder, leaseMs, isAlive)
    if (current === null) break
    if (Date.now() >= deadline) {
      throw new BusyError(
        `another pipeline run is in progress (process ${current.pid}, lease until ${new Date(current.expires_at).toISOString()}); try again when it ends`,
      )
    }
    await new Promise((r) => setTimeout(r, 250))
  }
  let renewedUntil = Date.now() + leaseMs
  let lost = false
  const renew = (): void => {
    if (lost) return
    const now = Date.now()
    let renewed: boolean
    try {
      renewed = renewLock(db, PIPELINE_LOCK, holder, leaseMs)
    } catch {
      // a busy or failing database: not renewed this time (the timer's next turn tries again; a
      // database that stays broken fails the work itself, with its own message)
      return
    }
    if (renewed) renewedUntil = now + leaseMs
    else lost = true
  }
  const timer = setInterval(renew, leaseMs / 3)
  timer.unref()
  const lease: LockLease = {
    keep(before: string) {
      renew()
      if (!lost) return
      const taker = lockHolder(db, PIPELINE_LOCK)
      throw new LockLostError(
        `this run's lease on the pipeline lock ran out at ${new Date(renewedUntil).toISOString()} without renewal (the process was stopped or busy ` +
          `for longer than ${Math.round(leaseMs / 1000)} s) and ${taker ? `process ${taker.pid}` : 'another run'} has taken the lock over; ` +
          `stopped before ${before}, the other run carries on`,
      )
    },
  }
  try {
    return await fn(lease)
  } finally {
    clearInterval(timer)
    releaseLock(db, PIPELINE_LOCK, holder)
  }
}
