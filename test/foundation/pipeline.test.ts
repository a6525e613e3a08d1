import { describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { listRuns, tryLock } from '../../src/db/runs.ts'
import { emit, pendingFor } from '../../src/events/outbox.ts'
import { BusyError } from '../../src/errors.ts'
import { PIPELINE_LOCK, withPipelineLock } from '../../src/pipeline.ts'
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
