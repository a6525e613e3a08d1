/**
 * The dashboard from outside, against a real `tides serve` on 127.0.0.1: no request without the
 * token changes anything (every write route, every method, every way of faking credentials or
 * origin), oversized bodies are refused with 413 whether or not they declare their length, a huge
 * URL does not bring the server down, and hostile text from postings is shown inert (escaped, with
 * a Content-Security-Policy that allows no inline script; OWASP XSS Prevention Cheat Sheet).
 * The routes are read from the app itself, so a new write route is covered as soon as it exists.
 */
import fs from 'node:fs'
import http from 'node:http'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { contentHash, openDb } from '../../src/db/connection.ts'
import { createApp } from '../../src/server/app.ts'
import { makeWorkspace, startTides, tides, waitFor, type Running, type Workspace } from './helpers.ts'

const TOKEN = 'reliability-test-token-0123456789'
const HOSTILE = ['<script>alert("tides")</script>', '"><img src=x onerror=alert(1)>', "javascript:alert('x')", '<svg onload=alert(1)>']

let ws: Workspace
let server: Running
let base = ''

function dbHash(): string {
  const db = openDb(ws.db, { readonly: true })
  try {
    return contentHash(db)
  } finally {
    db.close()
  }
}

beforeAll(async () => {
  ws = makeWorkspace({ n: 400, months: 12, name: 'web' })
  // hostile postings and a course to snooze
  const hostile = HOSTILE.map((h, i) =>
    JSON.stringify({ '@type': 'JobPosting', identifier: `xss-${i}`, title: `Analyst ${h}`, description: `Python and SQL ${h} Kubernetes`, datePosted: '2020-06-0' + (i + 1) }),
  )
  fs.appendFileSync(ws.postings, hostile.join('\n') + '\n')
  const courses = path.join(ws.dir, 'courses.csv')
  fs.writeFileSync(courses, `course_id,title,skills,last_reviewed,enrollments_12m,owner\nc-1,"Intro ${HOSTILE[0]!.replace(/"/g, '""')}",python|sql,2023-01-01,40,Ada\nc-2,Hadoop basics,hadoop,2019-01-01,3,Bo\n`)
  for (const args of [['import', 'courses', courses], ['run', 'all']]) {
    const r = await tides([...ws.args, ...args])
    expect(r.code, r.stderr).toBe(0)
  }
  server = startTides([...ws.args, 'serve', '--port', '0', '--no-schedules'])
  await waitFor(() => /dashboard: http:\/\/127\.0\.0\.1:\d+\//.test(server.stderr()), 60_000, 'the dashboard to listen')
  base = /dashboard: (http:\/\/127\.0\.0\.1:\d+)\//.exec(server.stderr())![1]!
  expect((await fetch(`${base}/healthz`)).status).toBe(200)
}, 180_000)

afterAll(async () => {
  server?.child.kill('SIGTERM')
  await server?.done
  ws?.cleanup()
})

/** Every route of the app with a method that may change something, params filled in. */
function writeRoutes(): { method: string; path: string }[] {
  const app = createApp(openDb(':memory:'), parseConfig({}))
  const out = new Map<string, { method: string; path: string }>()
  for (const r of app.routes) {
    if (r.method === 'GET' || r.method === 'ALL' || r.method === 'HEAD' || r.path.includes('*')) continue
    const p = r.path.replace(/:id\b/g, 'c-1').replace(/:(\w+)/g, 'x')
    out.set(`${r.method} ${p}`, { method: r.method, path: p })
  }
  return [...out.values()]
}

describe('without the token nothing changes', () => {
  it('every write route refuses every kind of request without valid credentials, and the database is untouched', async () => {
    const routes = writeRoutes()
    expect(routes.length).toBeGreaterThanOrEqual(4)
    const before = dbHash()
    const attempts: { name: string; init: RequestInit }[] = [
      { name: 'no credentials, JSON', init: { headers: { 'content-type': 'application/json' }, body: JSON.stringify({ term: 'x', action: 'dismiss', note: 'n', until: '2099-01-01' }) } },
      { name: 'wrong bearer', init: { headers: { authorization: `Bearer ${TOKEN}x`, 'content-type': 'application/json' }, body: '{}' } },
      { name: 'bearer with the token as a prefix', init: { headers: { authorization: `Bearer ${TOKEN.slice(0, -1)}`, 'content-type': 'application/json' }, body: '{}' } },
      { name: 'basic auth with the token', init: { headers: { authorization: `Basic ${Buffer.from(`x:${TOKEN}`).toString('base64')}`, 'content-type': 'application/json' }, body: '{}' } },
      { name: 'token in a cookie', init: { headers: { cookie: `tides_session=${TOKEN}; token=${TOKEN}`, 'content-type': 'application/json' }, body: '{}' } },
      { name: 'cross-site form post', init: { headers: { origin: 'http://evil.example', 'sec-fetch-site': 'cross-site', 'content-type': 'application/x-www-form-urlencoded' }, body: `_csrf=x&note=n&until=2099-01-01&term=x&action=dismiss` } },
      { name: 'same-origin form without session', init: { headers: { origin: base, 'content-type': 'application/x-www-form-urlencoded' }, body: `note=n&until=2099-01-01` } },
      { name: 'forged session cookie', init: { headers: { origin: base, cookie: 'tides_session=abc.def', 'x-csrf-token': 'def', 'content-type': 'application/x-www-form-urlencoded' }, body: 'note=n' } },
      { name: 'text/plain body (a CORS-simple request)', init: { headers: { 'content-type': 'text/plain' }, body: 'note=n' } },
    ]
    const failures: string[] = []
    for (const route of routes) {
      if (route.path === '/login') continue // signing in writes nothing; checked below
      for (const a of attempts) {
        const res = await fetch(`${base}${route.path}?token=${TOKEN}`, { method: route.method, redirect: 'manual', ...a.init })
        await res.arrayBuffer()
        // refused by the guard itself (401/403), not by a later check that a valid write would pass
        if (res.status !== 401 && res.status !== 403) failures.push(`${route.method} ${route.path} (${a.name}): ${res.status}`)
      }
      // other methods on the same path, and method override headers
      for (const method of ['PUT', 'PATCH', 'DELETE']) {
        const res = await fetch(`${base}${route.path}`, { method, headers: { 'content-type': 'application/json' }, body: '{}' })
        await res.arrayBuffer()
        if (![401, 403, 404, 405].includes(res.status)) failures.push(`${method} ${route.path}: ${res.status}`)
      }
      // a method override header is ignored: a GET stays the GET of that path (whatever it answers
      // without the header), and a POST asking to be something else is still a refused POST
      const plain = await fetch(`${base}${route.path}`, { method: 'GET', redirect: 'manual' })
      const plainBody = await plain.text()
      const override = await fetch(`${base}${route.path}`, { method: 'GET', redirect: 'manual', headers: { 'x-http-method-override': route.method, 'x-method-override': route.method } })
      const overrideBody = await override.text()
      if (override.status !== plain.status || overrideBody !== plainBody) failures.push(`GET ${route.path} with a method override to ${route.method}: ${override.status}, plain GET ${plain.status}`)
      const posted = await fetch(`${base}${route.path}`, { method: 'POST', redirect: 'manual', headers: { 'x-http-method-override': 'DELETE', 'content-type': 'application/json' }, body: '{}' })
      await posted.arrayBuffer()
      if (![401, 403, 404, 405].includes(posted.status)) failures.push(`POST ${route.path} with a method override to DELETE: ${posted.status}`)
    }
    expect(failures).toEqual([])
    expect(dbHash()).toBe(before)
  })

  it('the token itself works (the refusals above are not a misconfiguration)', async () => {
    const res = await fetch(`${base}/login`, { method: 'POST', redirect: 'manual', headers: { origin: base, 'content-type': 'application/x-www-form-urlencoded' }, body: `token=${TOKEN}` })
    expect(res.status).toBe(303)
    expect(res.headers.get('set-cookie') ?? '').toMatch(/HttpOnly/i)
    const wrong = await fetch(`${base}/api/courses/c-1/snooze`, { method: 'POST', headers: { authorization: `Bearer ${TOKEN}`, 'content-type': 'application/json' }, body: '{not json' })
    expect(wrong.status).toBe(400)
  })
})

/** A raw POST with a chunked body (no Content-Length) of `size` bytes. */
function chunkedPost(url: string, size: number, headers: Record<string, string>): Promise<number> {
  return new Promise((resolve, reject) => {
    const req = http.request(url, { method: 'POST', headers: { ...headers, 'transfer-encoding': 'chunked' } }, (res) => {
      res.resume()
      res.on('end', () => resolve(res.statusCode ?? 0))
    })
    req.on('error', (err: NodeJS.ErrnoException) => (err.code === 'EPIPE' || err.code === 'ECONNRESET' ? resolve(413) : reject(err)))
    const piece = Buffer.alloc(16 * 1024, 0x61)
    let sent = 0
    const write = (): void => {
      while (sent < size) {
        sent += piece.length
        if (!req.write(piece)) {
          req.once('drain', write)
          return
        }
      }
      req.end()
    }
    write()
  })
}

describe('oversized requests', () => {
  it('bodies over the limit are refused with 413, declared or chunked, with or without the token; nothing changes', async () => {
    const before = dbHash()
    const big = 'a'.repeat(64 * 1024 + 1)
    const variants: Record<string, string>[] = [{ 'content-type': 'application/json' }, { 'content-type': 'application/json', authorization: `Bearer ${TOKEN}` }]
    for (const headers of variants) {
      const res = await fetch(`${base}/api/courses/c-1/snooze`, { method: 'POST', headers, body: JSON.stringify({ note: big, until: '2099-01-01' }) })
      expect(res.status).toBe(413)
      expect(await chunkedPost(`${base}/api/courses/c-1/snooze`, 4 * 1024 * 1024, headers)).toBe(413)
    }
    expect(dbHash()).toBe(before)
    expect((await fetch(`${base}/healthz`)).status).toBe(200)
  })

  it('a huge URL or header is refused or answered, and the server keeps serving', async () => {
    const longUrl = await fetch(`${base}/skills/${'x'.repeat(200_000)}`).then((r) => r.status, () => 0)
    expect([0, 404, 414, 431]).toContain(longUrl)
    const longHeader = await fetch(`${base}/`, { headers: { 'x-big': 'y'.repeat(100_000) } }).then((r) => r.status, () => 0)
    expect([0, 200, 431]).toContain(longHeader)
    expect((await fetch(`${base}/healthz`)).status).toBe(200)
  })
})

describe('hostile text is inert', () => {
  it('pages escape hostile posting and course text, and the CSP allows no inline script', async () => {
    const pages = ['/', '/sources', '/courses', '/taxonomy', '/reskilling', '/api/overview', '/api/courses']
    for (const p of pages) {
      const res = await fetch(`${base}${p}`)
      expect(res.status, p).toBe(200)
      const body = await res.text()
      const type = res.headers.get('content-type') ?? ''
      if (p.startsWith('/api/')) {
        // JSON carries the data as it is; it must never be taken for HTML
        expect(type, p).toMatch(/^application\/json/)
        expect(res.headers.get('x-content-type-options'), p).toBe('nosniff')
      } else {
        expect(type, p).toMatch(/^text\/html/)
        for (const h of HOSTILE.slice(0, 2)) expect(body, p).not.toContain(h)
        expect(body, p).not.toMatch(/<script(?![^>]*\bsrc=)[^>]*>/i) // no inline script element at all
      }
      const csp = res.headers.get('content-security-policy') ?? ''
      expect(csp).toMatch(/script-src 'self'/)
      expect(csp).not.toMatch(/unsafe-inline|unsafe-eval/)
    }
    // the hostile course title is there, escaped
    const courses = await (await fetch(`${base}/courses`)).text()
    expect(courses).toContain('&lt;script&gt;alert(')
  })
})
