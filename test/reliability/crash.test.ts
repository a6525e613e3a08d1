/**
 * Crash safety, the quick version inside `npm test`: each built stage of ingest, map, fit and plan is
 * killed with SIGKILL at two random points while it works (the soak run does at least 20 each, see
 * test/soak/crash.soak.test.ts), and at least one kill per stage must land while the stage's run is
 * open; one more kill lands in the webhook delivery pass after the stage's run. After each kill the database passes integrity_check and every event in it is backed by
 * stored work; after a restart, the results equal a run without the kill, and so do the events since
 * the base as summed up by eventSummary (test/reliability/crash.ts says what may differ and why).
 * Every run delivers to a webhook endpoint in this process: each delivery is a stored event as sent
 * and signed (nothing delivered for work that rolled back), and every event since the base reaches
 * it by the end of the restart, in the clean run as after a kill.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { IMPORTERS } from '../../src/commands/registry.ts'
import { findStage } from '../../src/stages.ts'
import crypto from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { openDb } from '../../src/db/connection.ts'
import { emit } from '../../src/events/outbox.ts'
import { deliverWebhooks } from '../../src/events/webhooks.ts'
import { type CrashStage, type HookServer, type ReceivedDelivery, crashInDelivery, crashOnce, eventSummary, expectAllDelivered, expectDeliveredAsStored, expectEventsBackedByWork, expectNothingPending, prepareBases, seeded, setUpCrash, startHookServer } from './crash.ts'
import { makeWorkspace, query, tides, type Workspace } from './helpers.ts'

const KILLS = 2
let ws: Workspace
let bases: Awaited<ReturnType<typeof prepareBases>>
let hooks: HookServer

beforeAll(async () => {
  hooks = await startHookServer()
  ws = makeWorkspace({ n: 2000, months: 24, name: 'crash', batchSize: 50 })
  bases = await prepareBases(ws, prepare)
}, 300_000)
afterAll(async () => {
  await hooks?.close()
  ws?.cleanup()
})

/** What every crash database starts from: the generated taxonomy, when it can be imported. */
async function prepare(w: Workspace): Promise<void> {
  if (!IMPORTERS.taxonomy) return
  const r = await tides([...w.args, 'import', 'taxonomy', w.taxonomyCsv])
  expect(r.code, r.stderr).toBe(0)
}

describe('SIGKILL at random points', () => {
  const stages: CrashStage[] = ['ingest', 'map', 'fit', 'plan']
  for (const stage of stages) {
    it.skipIf(!findStage(stage))(`${stage}: ${KILLS} kills while it works, 1 while it delivers; integrity ok, events backed by work, restart equals a clean run`, async () => {
      const setup = await setUpCrash(ws, stage, bases[stage]!, hooks)
      const random = seeded(1000 + stages.indexOf(stage))
      const outcomes = []
      for (let i = 0; i < KILLS; i++) outcomes.push(await crashOnce(ws, setup, random, i))
      // and once in the webhook delivery pass that follows the stage's run
      await crashInDelivery(ws, setup, 0)
      // the kills must have hit the stage while it worked (else the test proves nothing), however
      // short its work: crashOnce's later tries kill as soon as the job run is recorded
      expect(outcomes.filter((o) => o.interrupted).length, `kills of ${stage} while it worked (${Math.round(setup.workMs)} ms)`).toBeGreaterThan(0)
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

  /** A database with events at given times (created_at) and map job runs started at given times. */
  function dbAt(events: [string, string, Record<string, unknown>][], mapRunsAt: string[] = []): string {
    const file = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'tides-checks-')), 'x.db')
    const db = openDb(file)
    for (const at of mapRunsAt) db.prepare("INSERT INTO job_runs(stage, trigger, started_at, status) VALUES ('map', 'manual', ?, 'ok')").run(at)
    for (const [at, type, payload] of events) db.prepare('INSERT INTO events(type, payload_json, created_at) VALUES (?, ?, ?)').run(type, JSON.stringify(payload), at)
    db.close()
    return file
  }
  const T = (s: number) => new Date(Date.UTC(2025, 0, 1, 0, 0, s)).toISOString()
  const base = { lastEvent: 0, mapped: 0 }
  const state = (id: string) => ['skill.state-changed', { id, label: id, before: null, after: 'rising', reason: 'r' }] as const
  /** A clean run: two ingest batches, one map run, fit, ability and plan once. */
  const cleanEvents = (): [string, string, Record<string, unknown>][] => [
    [T(1), 'documents.ingested', { source: 'corpus', runId: 1, read: 4, new: 3, duplicate: 1, firstId: 1, lastId: 4, from: '2024-01-02', to: '2024-03-01' }],
    [T(2), 'documents.ingested', { source: 'corpus', runId: 1, read: 2, new: 2, duplicate: 0, firstId: 5, lastId: 6, from: '2024-02-01', to: '2024-04-01' }],
    [T(11), 'documents.mapped', { mapped: 6, version: 1, mentions: 20, rollups: 9 }],
    [T(21), ...state('a')],
    [T(21), ...state('b')],
    [T(21), 'curves.fitted', { skills: 3, states: { rising: 2, steady: 1 }, stateChanges: 2 }],
    [T(22), 'ability.updated', { skills: 2, estimated: 5 }],
    [T(23), 'course.flagged', { courseId: 'c1', flag: 'retire', previous: null }],
    [T(23), 'plan.updated', { needs: 2, newFlags: 1 }],
  ]

  it('events of a killed run and its restart sum up to the clean run', () => {
    const clean = dbAt(cleanEvents(), [T(10)])
    // the killed run committed the first batch (with a map run of 1 document started at T(10) in
    // an earlier try) and the fit, then died; the restart ingests the rest in other batches, maps 5
    // more (a count that grows across the run boundary: only the job run tells the runs apart),
    // fits again (no state changes left) and plans
    const restarted = dbAt(
      [
        [T(1), 'documents.ingested', { source: 'corpus', runId: 1, read: 4, new: 3, duplicate: 1, firstId: 1, lastId: 4, from: '2024-01-02', to: '2024-03-01' }],
        [T(11), 'documents.mapped', { mapped: 1, version: 1, mentions: 4, rollups: 2 }],
        [T(30), 'documents.ingested', { source: 'corpus', runId: 2, read: 1, new: 1, duplicate: 0, firstId: 5, lastId: 5, from: '2024-04-01', to: '2024-04-01' }],
        [T(31), 'documents.ingested', { source: 'corpus', runId: 2, read: 1, new: 1, duplicate: 0, firstId: 6, lastId: 6, from: '2024-02-01', to: '2024-02-01' }],
        [T(41), 'documents.mapped', { mapped: 5, version: 1, mentions: 16, rollups: 7 }],
        [T(51), ...state('b')],
        [T(51), ...state('a')],
        [T(51), 'curves.fitted', { skills: 3, states: { rising: 2, steady: 1 }, stateChanges: 2 }],
        [T(52), 'curves.fitted', { skills: 3, states: { rising: 2, steady: 1 }, stateChanges: 0 }],
        [T(53), 'ability.updated', { skills: 2, estimated: 5 }],
        [T(54), 'course.flagged', { courseId: 'c1', flag: 'retire', previous: null }],
        [T(54), 'plan.updated', { needs: 2, newFlags: 1 }],
        [T(55), 'plan.updated', { needs: 2, newFlags: 0 }],
      ],
      [T(10), T(40)],
    )
    expect(eventSummary(restarted, base)).toEqual(eventSummary(clean, base))
  })

  it('events that do not sum up to the clean run', () => {
    const clean = eventSummary(dbAt(cleanEvents(), [T(10)]), base)
    const differs = (change: (e: [string, string, Record<string, unknown>][]) => void, runs = [T(10)]) => {
      const events = cleanEvents()
      change(events)
      return eventSummary(dbAt(events, runs), base)
    }
    // a batch announced twice, one lost, a duplicate counted as new
    expect(differs((e) => e.splice(1, 0, e[1]!))).not.toEqual(clean)
    expect(differs((e) => e.splice(1, 1))).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[0]![2], { new: 4, duplicate: 0 }))).not.toEqual(clean)
    // a second map run announcing the documents again, or mapping fewer mentions
    expect(differs((e) => e.splice(3, 0, [T(12), 'documents.mapped', { mapped: 6, version: 1, mentions: 20, rollups: 9 }]), [T(10), T(12)])).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[2]![2], { mentions: 19 }))).not.toEqual(clean)
    // a state change or course flag lost or different, another fit or plan result
    expect(differs((e) => e.splice(4, 1))).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[3]![2], { before: 'steady' }))).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[5]![2], { skills: 4 }))).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[6]![2], { estimated: 4 }))).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[7]![2], { flag: 'refresh' }))).not.toEqual(clean)
    expect(differs((e) => Object.assign(e[8]![2], { needs: 3 }))).not.toEqual(clean)
  })

  describe('webhook deliveries', () => {
    const secret = 'checks-webhook-secret'
    const sign = (body: Buffer, key = secret) => `sha256=${crypto.createHmac('sha256', key).update(body).digest('hex')}`
    function delivery(file: string, id: number, change: Partial<{ payload: unknown; key: string }> = {}): ReceivedDelivery {
      const [row] = query<{ type: string; payload_json: string; created_at: string }>(file, 'SELECT type, payload_json, created_at FROM events WHERE id = ?', id)
      const body = Buffer.from(JSON.stringify({ id, type: row?.type ?? 'plan.updated', createdAt: row?.created_at ?? T(1), payload: change.payload ?? (row ? JSON.parse(row.payload_json) : {}) }))
      return { body, signature: sign(body, change.key), eventHeader: row?.type ?? 'plan.updated', deliveryHeader: String(id) }
    }
    const two = () => dbWith([['curves.fitted', { skills: 3 }], ['plan.updated', { needs: 2 }]])

    it('deliveries of stored events, signed, every one delivered', () => {
      const file = two()
      const ids = expectDeliveredAsStored(file, [delivery(file, 1), delivery(file, 2), delivery(file, 2)], secret, 'x')
      expect([...ids].sort()).toEqual([1, 2])
      expectAllDelivered(file, ids, base, 'x')
    })

    it('a bad signature, an event that is not stored, an event that differs from the stored one (its id reused after a rollback)', () => {
      const file = two()
      expect(() => expectDeliveredAsStored(file, [delivery(file, 1, { key: 'another-secret' })], secret, 'x')).toThrow(/signature/)
      expect(() => expectDeliveredAsStored(file, [delivery(file, 3)], secret, 'x')).toThrow(/not in the database/)
      expect(() => expectDeliveredAsStored(file, [delivery(file, 2, { payload: { needs: 5 } })], secret, 'x')).toThrow(/differs from the stored/)
      const wrongHeader = { ...delivery(file, 1), eventHeader: 'plan.updated' }
      expect(() => expectDeliveredAsStored(file, [wrongHeader], secret, 'x')).toThrow(/headers/)
    })

    it('an event never delivered, unless excused (claimed by a killed run)', () => {
      const file = two()
      expect(() => expectAllDelivered(file, new Set([1]), base, 'x')).toThrow(/never delivered/)
      expect(expectAllDelivered(file, new Set([1]), base, 'x', new Set([2]))).toEqual([2])
    })

    it('what the sender really sends passes, and the endpoint records it under its path', async () => {
      const file = two()
      const server = await startHookServer(secret)
      try {
        const db = openDb(file)
        const hook = { url: server.url('x'), secret, events: [], timeoutMs: 2000, maxAttempts: 2, backoffMs: 0, maxBackoffMs: 0 }
        const report = await deliverWebhooks(db, { webhooks: [hook] })
        db.close()
        expect(report.delivered).toBe(2)
        await server.settle()
        expect(server.take('y')).toEqual([])
        const ids = expectDeliveredAsStored(file, server.take('x'), secret, 'x')
        expectAllDelivered(file, ids, base, 'x')
      } finally {
        await server.close()
      }
    })
  })
})
