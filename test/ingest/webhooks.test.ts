import crypto from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { listDeliveries } from '../../src/db/documents.ts'
import { emit } from '../../src/events/outbox.ts'
import { SIGNATURE_HEADER, deliverWebhooks, verifySignature } from '../../src/events/webhooks.ts'
import { runPipeline } from '../../src/pipeline.ts'
import { startServer, type TestServer } from './server.ts'

const SECRET = 'fernhollow-hook-secret'
let server: TestServer
let dir: string
beforeAll(async () => {
  server = await startServer({
    // fails the first two attempts of each event, then accepts
    '/flaky': (_req, res, seen) => {
      const id = seen.headers['x-tides-delivery']
      const tries = server.seen.filter((s) => s.path === '/flaky' && s.headers['x-tides-delivery'] === id).length
      res.writeHead(tries <= 2 ? 503 : 204).end()
    },
    '/ok': (_req, res) => void res.writeHead(200).end('thanks'),
    '/hang': () => {},
  })
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-hooks-'))
})
afterAll(async () => {
  await server.close()
  fs.rmSync(dir, { recursive: true, force: true })
})

function hooks(...list: { path?: string; url?: string; events?: string[]; timeoutMs?: number; maxAttempts?: number }[]) {
  return parseConfig({ webhooks: list.map((h) => ({ url: h.url ?? server.url(h.path!), secret: SECRET, backoffMs: 1000, events: h.events ?? [], timeoutMs: h.timeoutMs ?? 2000, maxAttempts: h.maxAttempts ?? 12 })) })
}

function addEvents(db: Db, n: number, type: 'documents.ingested' | 'curves.fitted' = 'documents.ingested'): void {
  db.transaction(() => {
    for (let i = 0; i < n; i++) emit(db, type, { source: 'feed-a', new: i })
  })()
}

describe('webhook delivery', () => {
  it('retries with exponential backoff until the endpoint recovers; each body is signed (HMAC-SHA256) and delivered', async () => {
    const db = openDb(':memory:')
    addEvents(db, 2)
    const cfg = hooks({ path: '/flaky' })
    let clock = Date.parse('2024-01-01T00:00:00Z')
    const now = () => clock
    const waits: string[] = []
    for (let pass = 0; pass < 6; pass++) {
      await deliverWebhooks(db, cfg, { now })
      const pending = listDeliveries(db).filter((d) => d.status === 'pending')
      if (pending.length === 0) break
      waits.push(...pending.map((d) => d.next_attempt_at!))
      // move the clock to the next due attempt
      clock = Math.max(...pending.map((d) => Date.parse(d.next_attempt_at!)))
    }
    const rows = listDeliveries(db)
    expect(rows.map((r) => [r.event_id, r.status, r.attempts])).toEqual([
      [2, 'delivered', 3],
      [1, 'delivered', 3],
    ])
    // waits after failures 1 and 2: backoffMs * 2^0, then * 2^1
    const start = Date.parse('2024-01-01T00:00:00Z')
    expect([...new Set(waits)].map((w) => Date.parse(w) - start)).toEqual([1000, 3000])
    const posts = server.seen.filter((s) => s.path === '/flaky')
    expect(posts).toHaveLength(6)
    for (const p of posts) {
      // an independent HMAC with node:crypto, and the module's constant-time check
      const mine = `sha256=${crypto.createHmac('sha256', SECRET).update(p.body).digest('hex')}`
      expect(p.headers[SIGNATURE_HEADER.toLowerCase()]).toBe(mine)
      expect(verifySignature(SECRET, p.body, mine)).toBe(true)
      expect(verifySignature('another-secret', p.body, mine)).toBe(false)
      const body = JSON.parse(p.body)
      expect(body).toMatchObject({ type: 'documents.ingested', payload: { source: 'feed-a' } })
      expect(String(body.id)).toBe(p.headers['x-tides-delivery'])
      expect(p.headers['content-type']).toBe('application/json')
    }
  })

  it('only the event types an endpoint asked for are queued', async () => {
    const db = openDb(':memory:')
    addEvents(db, 1, 'curves.fitted')
    addEvents(db, 1, 'documents.ingested')
    const before = server.hits('/ok')
    const r = await deliverWebhooks(db, hooks({ path: '/ok', events: ['documents.ingested'] }))
    expect(r).toMatchObject({ queued: 1, delivered: 1 })
    expect(server.hits('/ok')).toBe(before + 1)
    // nothing new: nothing sent again
    expect(await deliverWebhooks(db, hooks({ path: '/ok', events: ['documents.ingested'] }))).toMatchObject({ queued: 0, attempted: 0 })
  })

  it('two delivery passes at once send each event once (a pass claims a delivery before sending it)', async () => {
    const db = openDb(path.join(dir, 'claims.db'))
    const other = openDb(path.join(dir, 'claims.db'))
    addEvents(db, 5)
    const cfg = hooks({ path: '/ok' })
    const before = server.hits('/ok')
    await Promise.all([deliverWebhooks(db, cfg), deliverWebhooks(other, cfg)])
    expect(server.hits('/ok') - before).toBe(5)
    expect(listDeliveries(db).every((d) => d.status === 'delivered' && d.attempts === 1)).toBe(true)
    other.close()
    db.close()
  })

  it('a dead or hanging endpoint never blocks ingestion; it is retried later and given up after maxAttempts', async () => {
    const feedDir = path.join(dir, 'feeds')
    fs.mkdirSync(feedDir, { recursive: true })
    const file = path.join(feedDir, 'a.jsonl')
    fs.writeFileSync(file, JSON.stringify({ '@type': 'JobPosting', identifier: 'w1', title: 'Baker', description: 'Bread and pastries.', datePosted: '2023-05-01' }) + '\n')
    // a loopback port that was just free: nothing listens, the connection is refused at once
    const probe = await startServer({})
    const deadUrl = probe.url('/dead')
    await probe.close()
    const config = parseConfig({
      sources: [{ id: 'a', kind: 'jsonl', location: file }],
      webhooks: [
        { url: deadUrl, secret: SECRET, backoffMs: 0, maxAttempts: 2 },
        { url: server.url('/hang'), secret: SECRET, timeoutMs: 300, backoffMs: 60_000 },
      ],
    })
    const db = openDb(path.join(dir, 'dead.db'))
    const t0 = performance.now()
    const outcomes = await runPipeline(db, config, ['ingest'], { ripple: false })
    const ms = performance.now() - t0
    expect(outcomes[0]!.result!.counts).toMatchObject({ new: 1 })
    expect(db.prepare('SELECT COUNT(*) FROM documents').pluck().get()).toBe(1)
    // one bounded attempt per endpoint after the run: the hanging one costs its timeout once
    expect(ms).toBeLessThan(10_000)
    let rows = listDeliveries(db)
    expect(rows.find((r) => r.endpoint.endsWith('/dead'))).toMatchObject({ status: 'pending', attempts: 1, last_error: 'ECONNREFUSED' })
    expect(rows.find((r) => r.endpoint.endsWith('/hang'))).toMatchObject({ status: 'pending', attempts: 1, last_error: 'timed out after 300 ms' })
    await deliverWebhooks(db, config)
    rows = listDeliveries(db)
    expect(rows.find((r) => r.endpoint.endsWith('/dead'))).toMatchObject({ status: 'failed', attempts: 2 })
    // the hanging endpoint waits out its backoff: not tried again yet
    expect(rows.find((r) => r.endpoint.endsWith('/hang'))).toMatchObject({ status: 'pending', attempts: 1 })
    db.close()
  })
})
