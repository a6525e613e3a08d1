/**
 * Hostile feeds, served from 127.0.0.1: XML external entities and entity expansion (billion laughs)
 * are never expanded and no external DTD is fetched (OWASP XXE Prevention Cheat Sheet); a feed that
 * never ends is cut at ingest.maxBytes, a gzip bomb at maxBytes after decompression, and a server
 * that trickles bytes (slow loris) at ingest.timeoutMs. Complete items before a cut are kept.
 */
import fs from 'node:fs'
import http from 'node:http'
import type { AddressInfo } from 'node:net'
import os from 'node:os'
import path from 'node:path'
import zlib from 'node:zlib'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig, type SourceConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { readFeed } from '../../src/ingest/feed.ts'
import { ingestSource } from '../../src/ingest/stage.ts'
import { waitFor } from './helpers.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-hostile-'))
const SECRET = 'FERNHOLLOW-SECRET-7d1c'
const secretFile = path.join(tmp, 'secret.txt')
fs.writeFileSync(secretFile, `${SECRET}\n`)

function item(i: number): string {
  return `<item><guid>urn:fh:${i}</guid><title>Depot analyst ${i}</title><description>SQL and forklift scheduling ${i}</description><pubDate>Tue, 01 Apr 2025 09:00:00 GMT</pubDate></item>\n`
}
const HEAD = '<?xml version="1.0" encoding="UTF-8"?>\n<rss version="2.0"><channel><title>Fernhollow jobs</title>\n'
const TAIL = '</channel></rss>\n'

/** what the server saw: paths requested, and responses it was still writing when the client left */
const seen = { paths: [] as string[], abandoned: 0 }
let base = ''
let server: http.Server

beforeAll(async () => {
  server = http.createServer((req, res) => {
    seen.paths.push(req.url ?? '')
    res.on('close', () => {
      if (!res.writableEnded) seen.abandoned++
    })
    const url = req.url ?? ''
    if (url === '/endless') {
      res.writeHead(200, { 'Content-Type': 'application/rss+xml' })
      res.write(HEAD)
      let i = 0
      const pump = () => {
        while (!res.destroyed && res.write(item(i++)));
        if (!res.destroyed) res.once('drain', pump)
      }
      pump()
    } else if (url === '/slow') {
      res.writeHead(200, { 'Content-Type': 'application/rss+xml' })
      res.write(HEAD + item(0))
      const timer = setInterval(() => (res.destroyed ? clearInterval(timer) : res.write(' ')), 200)
      res.on('close', () => clearInterval(timer))
    } else if (url === '/gzip-bomb') {
      // 64 MiB of blank after one complete item, about 64 KB compressed
      res.writeHead(200, { 'Content-Type': 'application/rss+xml', 'Content-Encoding': 'gzip' })
      const gz = zlib.createGzip()
      gz.pipe(res)
      gz.write(HEAD + item(0))
      const blank = Buffer.alloc(1 << 20, 0x20)
      let n = 0
      const pump = () => {
        while (n < 64 && gz.write(blank)) n++
        if (n < 64) gz.once('drain', pump)
        else gz.end(TAIL)
      }
      pump()
    } else if (url === '/evil.dtd') {
      res.writeHead(200, { 'Content-Type': 'application/xml-dtd' })
      res.end(`<!ENTITY % file SYSTEM "file://${secretFile}"><!ENTITY leak "%file;">`)
    } else if (url === '/xxe') {
      res.writeHead(200, { 'Content-Type': 'application/rss+xml' })
      res.end(xxeFeed())
    } else {
      res.writeHead(404)
      res.end()
    }
  })
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r))
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`
})
afterAll(async () => {
  server.closeAllConnections()
  await new Promise((r) => server.close(r))
  fs.rmSync(tmp, { recursive: true, force: true })
})

function xxeFeed(): string {
  return (
    `<?xml version="1.0"?>\n<!DOCTYPE rss SYSTEM "${base}/evil.dtd" [\n<!ENTITY xxe SYSTEM "file://${secretFile}">\n<!ENTITY % remote SYSTEM "${base}/evil.dtd">\n%remote;\n]>\n` +
    `<rss version="2.0"><channel><title>t</title>\n<item><guid>urn:fh:x1</guid><title>Role &xxe;</title><description>text &leak; &xxe;</description><pubDate>Tue, 01 Apr 2025 09:00:00 GMT</pubDate></item>\n` +
    item(2) +
    TAIL
  )
}

function billionLaughs(levels: number): string {
  const ents = ['<!ENTITY lol0 "lol">']
  for (let i = 1; i <= levels; i++) ents.push(`<!ENTITY lol${i} "${`&lol${i - 1};`.repeat(10)}">`)
  return `<?xml version="1.0"?>\n<!DOCTYPE rss [\n${ents.join('\n')}\n]>\n<rss version="2.0"><channel>\n<item><guid>urn:fh:bomb</guid><title>&lol${levels};</title><description>&lol${levels};</description></item>\n${item(3)}${TAIL}`
}

function dbAndConfig(ingest: Record<string, unknown>): { db: Db; config: ReturnType<typeof parseConfig> } {
  return { db: openDb(':memory:'), config: parseConfig({ ingest: { retries: 0, backoffMs: 0, ...ingest } }) }
}

async function runFeedSource(url: string, ingest: Record<string, unknown>) {
  const { db, config } = dbAndConfig(ingest)
  const source: SourceConfig = { id: 'hostile', kind: 'feed', location: url, options: {} }
  const t0 = performance.now()
  const report = await ingestSource({ db, config }, source, 'test')
  const ms = performance.now() - t0
  const docs = db.prepare('SELECT external_id, title, body FROM documents ORDER BY id').all() as { external_id: string; title: string; body: string }[]
  const run = db.prepare('SELECT status, error FROM job_runs WHERE id = ?').get(report.runId) as { status: string; error: string | null }
  db.close()
  return { report, docs, run, ms }
}

describe('entities are never expanded', () => {
  it('XXE: a local file named in an external entity never reaches the stored text, and no external DTD is fetched', async () => {
    seen.paths.length = 0
    const { docs, run } = await runFeedSource(`${base}/xxe`, {})
    expect(seen.paths).toEqual(['/xxe'])
    expect(docs.map((d) => d.external_id)).toContain('urn:fh:2')
    for (const d of docs) expect(`${d.title} ${d.body}`).not.toContain(SECRET)
    expect(run.status).toMatch(/ok|partial/)
  })

  it('XXE straight into the parser: no secret, a warning that the DOCTYPE was removed', async () => {
    const r = await readFeed(xxeFeed(), 'xxe.xml', '2025-04-20T00:00:00Z')
    expect(JSON.stringify(r.items)).not.toContain(SECRET)
    expect(r.problems.some((p) => p.warning && /DOCTYPE declares entities; it was removed unexpanded/.test(p.reason))).toBe(true)
    expect(r.items.map((i) => i.doc.externalId)).toContain('urn:fh:2')
  })

  it('billion laughs (10^9 expansions declared): not expanded, the good item kept, memory flat', async () => {
    const heap = process.memoryUsage().heapUsed
    const r = await readFeed(billionLaughs(9), 'lol.xml', '2025-04-20T00:00:00Z')
    expect(process.memoryUsage().heapUsed - heap).toBeLessThan(200 * 1024 * 1024)
    expect(JSON.stringify(r.items)).not.toMatch(/(lol){4}/)
    expect(r.items.map((i) => i.doc.externalId)).toContain('urn:fh:3')
  })

  it('a truncated entity bomb (DOCTYPE never closed) is cut, not parsed', async () => {
    const bomb = billionLaughs(9)
    const r = await readFeed(bomb.slice(0, bomb.indexOf(']>')), 'cut.xml', '2025-04-20T00:00:00Z')
    expect(r.items).toEqual([])
    expect(r.fatal ?? '').toMatch(/\S/)
  })
})

describe('endless and slow feeds are cut', () => {
  it('a feed that never ends is cut at ingest.maxBytes; the complete items before the cut are kept', async () => {
    const maxBytes = 256 * 1024
    const { report, docs, run } = await runFeedSource(`${base}/endless`, { maxBytes, timeoutMs: 30_000 })
    expect(run.status).toBe('partial')
    expect(run.error).toMatch(/over the limit of 262144 bytes \(ingest\.maxBytes\)/)
    const itemBytes = Buffer.byteLength(item(500))
    expect(docs.length).toBeGreaterThan((maxBytes - HEAD.length) / itemBytes - 200)
    expect(docs.length).toBeLessThanOrEqual(Math.ceil(maxBytes / (itemBytes - 10)))
    expect(report.counts.new).toBe(docs.length)
    // the client hung up on the server's endless response (it is not left streaming)
    await waitFor(() => seen.abandoned > 0, 5000, 'the endless response to be abandoned')
  })

  it('a gzip bomb is cut at ingest.maxBytes after decompression', async () => {
    const { docs, run } = await runFeedSource(`${base}/gzip-bomb`, { maxBytes: 1024 * 1024, timeoutMs: 30_000 })
    expect(run.error).toMatch(/over the limit of 1048576 bytes/)
    expect(docs.map((d) => d.external_id)).toEqual(['urn:fh:0'])
  })

  it('a server that trickles bytes (slow loris) is cut at ingest.timeoutMs with a clear error', async () => {
    const { run, ms } = await runFeedSource(`${base}/slow`, { timeoutMs: 1500 })
    expect(run.status).toBe('failed')
    expect(run.error).toMatch(/timed out after 1500 ms \(ingest\.timeoutMs\)/)
    // the deadline is for the whole response, not per byte: well before a per-byte timer would fire
    expect(ms).toBeLessThan(15_000)
  })
})
