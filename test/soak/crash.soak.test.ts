/**
 * Crash safety, the long version: each built stage of ingest, map, fit and plan is killed with
 * SIGKILL at 20 random points (SOAK_KILLS overrides) of its working time, on a larger corpus than
 * the quick test. Same checks as test/reliability/crash.test.ts: integrity_check after each kill,
 * every event backed by stored work, and after a restart results and events (eventSummary) equal to
 * a clean run with no event lost and none foreign; every webhook delivery a stored event as sent and
 * signed, every event since the base delivered (also after a kill in the delivery pass). At least half the kills of every stage must land
 * while it works, however short its work.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { IMPORTERS } from '../../src/commands/registry.ts'
import { findStage } from '../../src/stages.ts'
import { type CrashStage, type HookServer, crashInDelivery, crashOnce, prepareBases, seeded, setUpCrash, startHookServer } from '../reliability/crash.ts'
import { makeWorkspace, tides, type Workspace } from '../reliability/helpers.ts'

const KILLS = Number(process.env['SOAK_KILLS'] ?? 20)
let ws: Workspace
let bases: Awaited<ReturnType<typeof prepareBases>>
let hooks: HookServer

beforeAll(async () => {
  hooks = await startHookServer()
  ws = makeWorkspace({ n: 8000, months: 36, name: 'soak-crash', batchSize: 250, concepts: 4000 })
  bases = await prepareBases(ws, async (w) => {
    if (!IMPORTERS.taxonomy) return
    const r = await tides([...w.args, 'import', 'taxonomy', w.taxonomyCsv])
    expect(r.code, r.stderr).toBe(0)
  })
})
afterAll(async () => {
  await hooks?.close()
  ws?.cleanup()
})

describe('SIGKILL at random points, many times', () => {
  const stages: CrashStage[] = ['ingest', 'map', 'fit', 'plan']
  for (const stage of stages) {
    it.skipIf(!findStage(stage))(`${stage}: ${KILLS} kills while it works, 1 while it delivers`, async () => {
      const setup = await setUpCrash(ws, stage, bases[stage]!, hooks)
      const random = seeded(2000 + stages.indexOf(stage))
      let interrupted = 0
      for (let i = 0; i < KILLS; i++) {
        const o = await crashOnce(ws, setup, random, i)
        if (o.interrupted) interrupted++
      }
      await crashInDelivery(ws, setup, 0)
      process.stderr.write(`${stage}: ${KILLS} kills, ${interrupted} while the run was open (working time ${Math.round(setup.workMs)} ms)\n`)
      // most kills must land while the stage works, or the soak proves little (crashOnce's later
      // tries kill as soon as the job run is recorded, so short stages are caught too)
      expect(interrupted).toBeGreaterThanOrEqual(Math.ceil(KILLS / 2))
    })
  }
})
