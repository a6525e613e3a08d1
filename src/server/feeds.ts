/**
 * @module server/feeds
 * Serves the feed files under <dataDir>/feeds at /feeds/<name> with ETag and Last-Modified, so the
 * demo's sources are fetched over real HTTP on loopback (conditional requests answer 304).
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import type { Hono } from 'hono'

export function mountFeeds(app: Hono, dataDir: string): void {
  const root = path.join(dataDir, 'feeds')
  app.get('/feeds/:name', (c) => {
    const name = c.req.param('name')
    if (!/^[\w.-]+\.(xml|rss|atom|jsonl)$/.test(name)) return c.text('not found', 404)
    const file = path.join(root, name)
    let stat: fs.Stats
    try {
      stat = fs.statSync(file)
    } catch {
      return c.text('not found', 404)
    }
    const etag = `"${crypto.createHash('sha1').update(`${stat.size}:${stat.mtimeMs}`).digest('hex').slice(0, 16)}"`
    const lastModified = new Date(Math.floor(stat.mtimeMs / 1000) * 1000).toUTCString()
    if (c.req.header('if-none-match') === etag) return c.body(null, 304, { ETag: etag, 'Last-Modified': lastModified })
    const since = c.req.header('if-modified-since')
    if (!c.req.header('if-none-match') && since && Date.parse(since) >= Date.parse(lastModified)) {
      return c.body(null, 304, { ETag: etag, 'Last-Modified': lastModified })
    }
    const type = name.endsWith('.jsonl') ? 'application/x-ndjson' : name.endsWith('.atom') ? 'application/atom+xml' : 'application/rss+xml'
    return c.body(fs.readFileSync(file), 200, { 'Content-Type': `${type}; charset=utf-8`, ETag: etag, 'Last-Modified': lastModified })
  })
}
