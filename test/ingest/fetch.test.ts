import zlib from 'node:zlib'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { getSource } from '../../src/db/documents.ts'
import { listRuns } from '../../src/db/runs.ts'
import { ingestSources } from '../../src/ingest/stage.ts'
import { rssFeed, startServer, type TestServer } from './server.ts'

const FEED = rssFeed(5)
const ETAG = '"v1"'
const LAST_MODIFIED = 'Mon, 01 May 2023 10:00:00 GMT'
let server: TestServer

beforeAll(async () => {
  server = await startServer({
    '/etag': (req, res) => {
      if (req.headers['if-none-match'] === ETAG) return void res.writeHead(304, { ETag: ETAG }).end()
      res.writeHead(200, { 'Content-Type': 'application/rss+xml', ETag: ETAG }).end(FEED)
    },
    '/last-modified': (req, res) => {
      if (req.headers['if-modified-since'] === LAST_MODIFIED) return void res.writeHead(304).end()
      res.writeHead(200, { 'Content-Type': 'application/rss+xml', 'Last-Modified': LAST_MODIFIED }).end(rssFeed(2, 'lm'))
    },
    '/flaky': (_req, res, _s, n) => {
      if (n <= 2) return void res.writeHead(500).end('try later')
      res.writeHead(200, { 'Content-Type': 'application/rss+xml' }).end(rssFeed(3, 'flaky'))
    },
    '/slow': (_req, res) => {
      // headers and a first chunk, then nothing: the deadline covers the whole response
      res.writeHead(200, { 'Content-Type': 'application/rss+xml' })
      res.write('<?xml version="1.0"?><rss version="2.0"><channel><title>slow</title>')
    },
    '/big-declared': (_req, res) => {
      res.writeHead(200, { 'Content-Type': 'application/rss+xml', 'Content-Length': String(10_000_000) })
      res.write('<rss')
    },
    '/endless': (_req, res) => {
      // no Content-Length; items keep coming: the body is cut at maxBytes and the complete items kept
      res.writeHead(200, { 'Content-Type': 'application/rss+xml' })
      res.write('<?xml version="1.0"?>\n<rss version="2.0"><channel><title>endless</title>\n')
      let i = 0
      const more = () => {
        if (res.destroyed) return
        let chunk = ''
        for (let k = 0; k < 20; k++, i++) chunk += `<item><guid>e-${i}</guid><title>t${i}</title><description>endless item ${i} ${'x'.repeat(40)}</description><pubDate>Mon, 01 May 2023 10:00:00 GMT</pubDate></item>\n`
        if (res.write(chunk)) setImmediate(more)
        else res.once('drain', more)
      }
      more()
    },
    '/loop': (_req, res) => void res.writeHead(302, { Location: '/loop' }).end(),
    '/moved': (_req, res) => void res.writeHead(301, { Location: '/etag' }).end(),
    '/to-file': (_req, res) => void res.writeHead(302, { Location: 'file:///etc/passwd' }).end(),
    '/gzip-truncated': (_req, res) => {
      const gz = zlib.gzipSync(rssFeed(40, 'gz'))
      res.writeHead(200, { 'Content-Type': 'application/rss+xml', 'Content-Encoding': 'gzip' }).end(gz.subarray(0, Math.floor(gz.length * 0.6)))
    },
    '/html': (_req, res) => void res.writeHead(200, { 'Content-Type': 'text/html' }).end('<!doctype html><html><head><title>Jobs</title></head><body><p>Please enable JavaScript</p></body></html>'),
    '/gone': (_req, res) => void res.writeHead(404).end('no'),
  })
})
afterAll(() => server.close())

function config(sources: { id: string; path: string }[], ingest: Record<string, unknown> = {}) {
  return parseConfig({
    ingest: { timeoutMs: 1500, retries: 3, backoffMs: 1, maxBytes: 200_000, ...ingest },
    sources: sources.map((s) => ({ id: s.id, kind: 'feed', location: server.url(s.path) })),
  })
}

async function run(db: Db, cfg: ReturnType<typeof config>, only?: string) {
  return ingestSources(db, cfg, { only })
}

describe('feed fetching over HTTP (local server on 127.0.0.1)', () => {
  it('200 with an ETag, then 304 for the conditional request: nothing read, nothing stored', async () => {
    const db = openDb(':memory:')
    const cfg = config([{ id: 'e', path: '/etag' }])
    const [first] = await run(db, cfg)
    expect(first).toMatchObject({ status: 'ok', counts: expect.objectContaining({ read: 5, new: 5 }) })
    expect(getSource(db, 'e')!.etag).toBe(ETAG)
    const before = server.hits('/etag')
    const [second] = await run(db, cfg)
    expect(server.hits('/etag')).toBe(before + 1)
    expect(server.seen.at(-1)!.headers['if-none-match']).toBe(ETAG)
    expect(second).toMatchObject({ status: 'ok', counts: expect.objectContaining({ read: 0, new: 0 }) })
    expect(JSON.parse(listRuns(db, 1)[0]!.details_json)).toMatchObject({ unchanged: 'HTTP 304 Not Modified' })
    // a 304 writes no event either
    expect(db.prepare('SELECT COUNT(*) FROM events').pluck().get()).toBe(1)
  })

  it('Last-Modified is sent back as If-Modified-Since', async () => {
    const db = openDb(':memory:')
    const cfg = config([{ id: 'lm', path: '/last-modified' }])
    await run(db, cfg)
    expect(getSource(db, 'lm')!.last_modified).toBe(LAST_MODIFIED)
    const [again] = await run(db, cfg)
    expect(server.seen.at(-1)!.headers['if-modified-since']).toBe(LAST_MODIFIED)
    expect(again!.counts.read).toBe(0)
  })

  it('500 then 200: retried with backoff, the items land', async () => {
    const db = openDb(':memory:')
    const [r] = await run(db, config([{ id: 'f', path: '/flaky' }]))
    expect(r).toMatchObject({ status: 'ok', counts: expect.objectContaining({ new: 3 }) })
    expect(server.hits('/flaky')).toBe(3)
    expect(JSON.parse(listRuns(db, 1)[0]!.details_json).attempts).toBe(3)
  })

  it('a slow response is cut at the deadline, the error is on the run, and other sources keep running', async () => {
    const db = openDb(':memory:')
    const cfg = config([{ id: 'slow', path: '/slow' }, { id: 'good', path: '/etag' }], { timeoutMs: 300, retries: 1 })
    const reports = await run(db, cfg)
    expect(reports.map((r) => [r.source, r.status])).toEqual([
      ['slow', 'failed'],
      ['good', 'ok'],
    ])
    const runs = listRuns(db, 10)
    const slow = runs.find((r) => r.source_id === 'slow')!
    expect(slow.status).toBe('failed')
    expect(slow.error).toMatch(/timed out after 300 ms .*after 2 attempts/)
    expect(runs.find((r) => r.source_id === 'good')!.new).toBe(5)
  })

  it('a body declared over maxBytes is refused without reading it', async () => {
    const db = openDb(':memory:')
    const [r] = await run(db, config([{ id: 'b', path: '/big-declared' }]))
    expect(r!.status).toBe('failed')
    expect(r!.error).toMatch(/10000000 bytes, over the limit of 200000 \(ingest\.maxBytes\)/)
  })

  it('an endless body is cut at maxBytes; the complete items before the cut land and the run says so', async () => {
    const db = openDb(':memory:')
    const [r] = await run(db, config([{ id: 'end', path: '/endless' }], { maxBytes: 50_000 }))
    expect(r!.status).toBe('partial')
    expect(r!.error).toMatch(/over the limit of 50000 bytes/)
    expect(r!.counts.new).toBeGreaterThan(100)
    // no validators are stored for a body that was cut, so the next run fetches it again
    expect(getSource(db, 'end')!.etag).toBeNull()
  })

  it('a redirect loop stops after maxRedirects; redirects to other schemes are refused; a good redirect is followed', async () => {
    const db = openDb(':memory:')
    const [loop, file, moved] = await run(db, config([{ id: 'loop', path: '/loop' }, { id: 'file', path: '/to-file' }, { id: 'moved', path: '/moved' }], { maxRedirects: 3 }))
    expect(loop!.error).toMatch(/too many redirects \(more than 3/)
    expect(server.hits('/loop')).toBe(4)
    expect(file!.error).toMatch(/redirect to a file: URL refused/)
    expect(moved).toMatchObject({ status: 'ok', counts: expect.objectContaining({ new: 5 }) })
  })

  it('a truncated gzip body keeps the items that were complete and records why the rest is missing', async () => {
    const db = openDb(':memory:')
    const [r] = await run(db, config([{ id: 'gz', path: '/gzip-truncated' }]))
    expect(r!.status).toBe('partial')
    expect(r!.error).toMatch(/compressed body is truncated or corrupt \(gzip: unexpected end of file\)/)
    expect(r!.counts.new).toBeGreaterThan(5)
    expect(r!.counts.new).toBeLessThan(40)
    const details = JSON.parse(listRuns(db, 1)[0]!.details_json)
    expect(details.problems.some((p: { reason: string }) => /cut off/.test(p.reason))).toBe(true)
  })

  it('an HTML page instead of a feed is refused with that reason; a 404 is not retried', async () => {
    const db = openDb(':memory:')
    const [html, gone] = await run(db, config([{ id: 'html', path: '/html' }, { id: 'gone', path: '/gone' }]))
    expect(html).toMatchObject({ status: 'failed', error: 'the response is an HTML page, not an RSS or Atom feed' })
    expect(gone!.error).toMatch(/^HTTP 404/)
    expect(server.hits('/gone')).toBe(1)
  })
})
