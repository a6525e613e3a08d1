/**
 * Crash safety, the long version: each built stage of ingest, map, fit and plan is killed with
 * SIGKILL at 20 random points (SOAK_KILLS overrides) of its working time, on a larger corpus than
 * the quick test. Same checks as test/reliability/crash.test.ts: integrity_check after each kill,
 * every event backed by stored work, and after a restart results equal to a clean run with no event
 * lost and none foreign.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { IMPORTERS } from '../../src/commands/registry.ts'
import { findStage } from '../../src/stages.ts'
import { type CrashStage, crashOnce, prepareBases, seeded, setUpCrash } from '../reliability/crash.ts'
import { makeWorkspace, tides, type Workspace } from '../reliability/helpers.ts'

const KILLS = Number(process.env['SOAK_KILLS'] ?? 20)
let ws: Workspace
let bases: Awaited<ReturnType<typeof prepareBases>>

beforeAll(async () => {
  ws = makeWorkspace({ n: 8000, months: 36, name: 'soak-crash', batchSize: 250, concepts: 4000 })
  bases = await prepareBases(ws, async (w) => {
    if (!IMPORTERS.taxonomy) return
    const r = await tides([...w.args, 'import', 'taxonomy', w.taxonomyCsv])
    expect(r.code, r.stderr).toBe(0)
  })
})
afterAll(() => ws?.cleanup())

describe('SIGKILL at random points, many times', () => {
  const stages: CrashStage[] = ['ingest', 'map', 'fit', 'plan']
  for (const stage of stages) {
    it.skipIf(!findStage(stage))(`${stage}: ${KILLS} kills`, async () => {
      const setup = await setUpCrash(ws, stage, bases[stage]!)
      const random = seeded(2000 + stages.indexOf(stage))
      let interrupted = 0
      for (let i = 0; i < KILLS; i++) {
        const o = await crashOnce(ws, setup, random, i)
        if (o.interrupted) interrupted++
      }
      process.stderr.write(`${stage}: ${KILLS} kills, ${interrupted} while the run was open (working time ${Math.round(setup.workMs)} ms)\n`)
      // most kills must land while the stage works, or the soak proves little
      if (setup.workMs > 300) expect(interrupted).toBeGreaterThanOrEqual(Math.ceil(KILLS / 2))
    })
  }
})
