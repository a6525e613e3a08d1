/**
 * A scripted HTTP server on 127.0.0.1 for ingest and webhook tests: each path has a handler; every
 * request is recorded (method, path, headers, body).
 */
import http from 'node:http'
import type { AddressInfo } from 'node:net'

export interface Seen {
  method: string
  path: string
  headers: http.IncomingHttpHeaders
  body: string
}

export type Handler = (req: http.IncomingMessage, res: http.ServerResponse, seen: Seen, count: number) => void

export interface TestServer {
  url: (path: string) => string
  seen: Seen[]
  hits: (path: string) => number
  close: () => Promise<void>
}

export async function startServer(routes: Record<string, Handler>): Promise<TestServer> {
  const seen: Seen[] = []
  const server = http.createServer((req, res) => {
    const chunks: Buffer[] = []
    req.on('data', (c: Buffer) => chunks.push(c))
    req.on('end', () => {
      const path = (req.url ?? '/').split('?')[0]!
      const s: Seen = { method: req.method ?? 'GET', path, headers: req.headers, body: Buffer.concat(chunks).toString('utf8') }
      seen.push(s)
      const handler = routes[path]
      if (!handler) {
        res.writeHead(404).end('not found')
        return
      }
      handler(req, res, s, seen.filter((x) => x.path === path).length)
    })
  })
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve))
  const { port } = server.address() as AddressInfo
  return {
    url: (path) => `http://127.0.0.1:${port}${path}`,
    seen,
    hits: (path) => seen.filter((s) => s.path === path).length,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections()
        server.close(() => resolve())
      }),
  }
}

/** An RSS 2.0 feed with n items (ids item-0..), each with a date and distinct text. */
export function rssFeed(n: number, prefix = 'item'): string {
  const items = Array.from(
    { length: n },
    (_, i) =>
      `<item><title>Role ${i}</title><guid isPermaLink="false">${prefix}-${i}</guid><pubDate>Mon, 0${1 + (i % 9)} May 2023 10:00:00 GMT</pubDate><description>Posting ${prefix} ${i}: ${'cooperative orchard depot '.repeat(3)}number ${i} ${i * 7919}</description></item>`,
  ).join('\n')
  return `<?xml version="1.0" encoding="utf-8"?>\n<rss version="2.0"><channel><title>Fernhollow test feed</title><link>http://jobs.fernhollow.example/</link><description>t</description>\n${items}\n</channel></rss>\n`
}
