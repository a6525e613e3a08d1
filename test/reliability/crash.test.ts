/**
 * Crash safety, the quick version inside `npm test`: each built stage of ingest, map, fit and plan is
 * killed with SIGKILL at two random points while it works (the soak run does at least 20 each, see
 * test/soak/crash.soak.test.ts). After each kill the database passes integrity_check and every event
 * in it is backed by stored work; after a restart, results and events equal a run without the kill.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { IMPORTERS } from '../../src/commands/registry.ts'
import { findStage } from '../../src/stages.ts'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { openDb } from '../../src/db/connection.ts'
import { emit } from '../../src/events/outbox.ts'
import { type CrashStage, crashOnce, expectEventsBackedByWork, expectNothingPending, prepareBases, seeded, setUpCrash } from './crash.ts'
import { makeWorkspace, tides, type Workspace } from './helpers.ts'

const KILLS = 2
let ws: Workspace
let bases: Awaited<ReturnType<typeof prepareBases>>

beforeAll(async () => {
  ws = makeWorkspace({ n: 2000, months: 24, name: 'crash', batchSize: 50 })
  bases = await prepareBases(ws, prepare)
}, 300_000)
afterAll(() => ws?.cleanup())

/** What every crash database starts from: the generated taxonomy, when it can be imported. */
async function prepare(w: Workspace): Promise<void> {
  if (!IMPORTERS.taxonomy) return
  const r = await tides([...w.args, 'import', 'taxonomy', w.taxonomyCsv])
  expect(r.code, r.stderr).toBe(0)
}

describe('SIGKILL at random points', () => {
  const stages: CrashStage[] = ['ingest', 'map', 'fit', 'plan']
  for (const stage of stages) {
    it.skipIf(!findStage(stage))(`${stage}: ${KILLS} kills; integrity ok, events backed by work, restart equals a clean run`, async () => {
      const setup = await setUpCrash(ws, stage, bases[stage]!)
      const random = seeded(1000 + stages.indexOf(stage))
      const outcomes = []
      for (let i = 0; i < KILLS; i++) outcomes.push(await crashOnce(ws, setup, random, i))
      // the kills must have hit the stage while it worked (else the test proves nothing)
      if (setup.workMs > 300) expect(outcomes.filter((o) => o.interrupted).length).toBeGreaterThan(0)
    }, 300_000)
  }
})

describe('the crash checks catch what they claim to', () => {
  function dbWith(events: [string, Record<string, unknown>][]): string {
    const file = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'tides-checks-')), 'x.db')
    const db = openDb(file)
    db.transaction(() => {
      for (const [type, payload] of events) emit(db, type as never, payload)
    })()
    db.close()
    return file
  }

  it('an event announcing documents that are not stored', () => {
    const file = dbWith([['documents.ingested', { firstId: 1, lastId: 10, new: 10, duplicate: 0 }]])
    expect(() => expectEventsBackedByWork(file)).toThrow(/announced as ingested/)
  })

  it('an event announcing mapped documents or fitted curves that are not there', () => {
    expect(() => expectEventsBackedByWork(dbWith([['documents.mapped', { mapped: 5 }]]))).toThrow(/announced as mapped/)
    expect(() => expectEventsBackedByWork(dbWith([['curves.fitted', { skills: 3 }]]))).toThrow(/announced as fitted/)
    expect(() => expectEventsBackedByWork(dbWith([['plan.updated', { needs: 2 }]]))).toThrow(/announced as ranked/)
  })

  it('an event a subscribed stage never handled', () => {
    const file = dbWith([['documents.ingested', { firstId: 1, lastId: 0, new: 0, duplicate: 0 }]])
    if (findStage('map')) expect(() => expectNothingPending(file, 'ingest', { lastEvent: 0, mapped: 0 })).toThrow(/left events pending/)
    expect(() => expectNothingPending(file, 'fit', { lastEvent: 0, mapped: 0 })).toThrow()
  })
})
