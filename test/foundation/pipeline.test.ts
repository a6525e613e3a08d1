import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { listRuns, lockHolder, tryLock } from '../../src/db/runs.ts'
import { emit, pendingFor } from '../../src/events/outbox.ts'
import { BusyError, LockLostError } from '../../src/errors.ts'
import { PIPELINE_LOCK, runPipeline, withPipelineLock } from '../../src/pipeline.ts'
import { loadConfig } from '../../src/config.ts'
import { STAGE_ORDER } from '../../src/stage.ts'
import { STAGES } from '../../src/stages.ts'

describe('events outbox', () => {
  it('refuses an event outside a transaction: it must commit with its work', () => {
    const db = openDb(':memory:')
    expect(() => emit(db, 'plan.updated', {})).toThrow(/inside the transaction/)
  })

  it('an event of rolled-back work is never seen', () => {
    const db = openDb(':memory:')
    const work = db.transaction(() => {
      emit(db, 'documents.ingested', { n: 1 })
      throw new Error('crash before commit')
    })
    expect(() => work()).toThrow('crash before commit')
    expect(pendingFor(db, 'stage:map', ['documents.ingested']).events).toHaveLength(0)
    db.transaction(() => emit(db, 'documents.ingested', { n: 2 }))()
    const pending = pendingFor(db, 'stage:map', ['documents.ingested'])
    expect(pending.events.map((e) => JSON.parse(e.payload_json))).toEqual([{ n: 2 }])
  })
})

describe('pipeline lock', () => {
  it('a second holder is refused with a clear message while the first is alive', async () => {
    const db = openDb(':memory:')
    await withPipelineLock(db, async () => {
      await expect(withPipelineLock(db, async () => 1)).rejects.toThrow(BusyError)
      await expect(withPipelineLock(db, async () => 1)).rejects.toThrow(/another pipeline run is in progress/)
    })
    await expect(withPipelineLock(db, async () => 2)).resolves.toBe(2)
  })

  it('the lock of a dead process is taken over', () => {
    const db = openDb(':memory:')
    db.prepare('INSERT INTO locks(name, holder, pid, expires_at) VALUES (?, ?, ?, ?)').run(PIPELINE_LOCK, 'ghost', 999999, Date.now() + 60_000)
    expect(tryLock(db, PIPELINE_LOCK, 'me', 1000, () => false)).toBeNull()
    expect(tryLock(db, PIPELINE_LOCK, 'other', 1000, () => true)).toMatchObject({ holder: 'me' })
  })

  it('a run that works longer than its lease keeps the lock: the timer renews it while the event loop turns', async () => {
    const db = openDb(':memory:')
    const leaseMs = 150
    await withPipelineLock(
      db,
      async (lease) => {
        await new Promise((r) => setTimeout(r, 6 * leaseMs))
        // four leases later another run is still refused, and the lease reaches past now
        expect(tryLock(db, PIPELINE_LOCK, 'other', leaseMs, () => true)).toMatchObject({ pid: process.pid })
        expect(lockHolder(db, PIPELINE_LOCK)!.expires_at).toBeGreaterThan(Date.now())
        expect(() => lease.keep('stage fit')).not.toThrow()
      },
      0,
      leaseMs,
    )
    expect(lockHolder(db, PIPELINE_LOCK)).toBeNull()
  })

  it('a holder whose lease ran out unrenewed and was taken over stops at its next keep(), and leaves the new holder’s lock alone', async () => {
    const db = openDb(':memory:')
    const leaseMs = 100
    let stopped: unknown = null
    await withPipelineLock(
      db,
      async (lease) => {
        // the event loop blocked for three leases: the timer cannot renew
        const until = Date.now() + 3 * leaseMs
        while (Date.now() < until) {
          /* busy */
        }
        // a live process may take over an expired lease (the next test's rule)
        expect(tryLock(db, PIPELINE_LOCK, 'other', 60_000, () => true)).toBeNull()
        try {
          lease.keep('stage plan')
        } catch (err) {
          stopped = err
        }
      },
      0,
      leaseMs,
    )
    expect(stopped).toBeInstanceOf(LockLostError)
    expect(String((stopped as Error).message)).toMatch(
      new RegExp(`lease on the pipeline lock ran out at \\d{4}-\\d\\d-\\d\\dT[\\d:.]+Z without renewal .* process ${process.pid} has taken the lock over; stopped before stage plan`),
    )
    // the release in `finally` removed nothing of the new holder's
    expect(lockHolder(db, PIPELINE_LOCK)).toMatchObject({ holder: 'other' })
  })

  it('a renewal that meets a busy database is skipped, not thrown from the timer, and renewal resumes', async () => {
    const file = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'tides-lease-')), 'x.db')
    const db = openDb(file)
    const other = new Database(file)
    try {
      db.pragma('busy_timeout = 5')
      const leaseMs = 90
      await withPipelineLock(
        db,
        async (lease) => {
          // another connection holds the write lock over several renewal turns
          other.exec('BEGIN IMMEDIATE')
          await new Promise((r) => setTimeout(r, 4 * leaseMs))
          other.exec('COMMIT')
          await new Promise((r) => setTimeout(r, leaseMs))
          expect(lockHolder(db, PIPELINE_LOCK)!.expires_at).toBeGreaterThan(Date.now())
          expect(() => lease.keep('stage fit')).not.toThrow()
        },
        0,
        leaseMs,
      )
    } finally {
      other.close()
      db.close()
    }
  })

  it('runPipeline keeps the lease before every stage: once taken over, no further stage runs', async () => {
    const db = openDb(':memory:')
    const config = loadConfig({ db: ':memory:' })
    const seen: string[] = []
    const run = runPipeline(db, config, ['map', 'fit', 'plan'], {
      leaseMs: 100,
      ripple: false,
      log: (message) => {
        seen.push(message)
        if (seen.length === 1) {
          // inside the first stage: block past the lease, then another run takes the lock
          const until = Date.now() + 300
          while (Date.now() < until) {
            /* busy */
          }
          tryLock(db, PIPELINE_LOCK, 'other', 60_000, () => true)
        }
      },
    })
    await expect(run).rejects.toThrow(LockLostError)
    await expect(run).rejects.toThrow(/stopped before stage fit/)
    expect(listRuns(db).map((r) => r.stage)).toEqual(['map'])
    expect(lockHolder(db, PIPELINE_LOCK)).toMatchObject({ holder: 'other' })
  })

  it('an expired lease is taken over even if the process lives', () => {
    const db = openDb(':memory:')
    db.prepare('INSERT INTO locks(name, holder, pid, expires_at) VALUES (?, ?, ?, ?)').run(PIPELINE_LOCK, 'slow', process.pid, Date.now() - 1)
    expect(tryLock(db, PIPELINE_LOCK, 'me', 1000, () => true)).toBeNull()
    expect(listRuns(db)).toEqual([])
  })
})


describe('the stage registry', () => {
  it('registers the stage modules in STAGE_ORDER (the CLI names the stages from stage.ts without loading them)', () => {
    expect(STAGES.map((stage) => stage.name)).toEqual([...STAGE_ORDER])
  })
})
