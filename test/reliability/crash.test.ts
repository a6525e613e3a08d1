/**
 * Crash safety, the quick version inside `npm test`: each built stage of ingest, map, fit and plan is
 * killed with SIGKILL at two random points while it works (the soak run does at least 20 each, see
 * test/soak/crash.soak.test.ts). After each kill the database passes integrity_check and every event
 * in it is backed by stored work; after a restart, results and events equal a run without the kill.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { IMPORTERS } from '../../src/commands/registry.ts'
import { findStage } from '../../src/stages.ts'
import { type CrashStage, crashOnce, prepareBases, seeded, setUpCrash } from './crash.ts'
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
