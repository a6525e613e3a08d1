/**
 * The dashboard under load on 127.0.0.1: 200 requests per second for 60 s (SOAK_WEB_SECONDS
 * overrides) across pages and API routes, while a pipeline run writes new postings in another
 * process, with zero errors, zero timeouts and only 2xx answers. Load generator: autocannon.
 */
import fs from 'node:fs'
import autocannon from 'autocannon'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { generatePostings } from '../../bench/corpus.ts'
import { makeWorkspace, smallTaxonomy, startTides, tides, waitFor, type Running, type Workspace } from '../reliability/helpers.ts'

const SECONDS = Number(process.env['SOAK_WEB_SECONDS'] ?? 60)
const RATE = 200
let ws: Workspace
let server: Running
let base = ''

beforeAll(async () => {
  ws = makeWorkspace({ n: 3000, months: 24, name: 'soak-web' })
  const r = await tides([...ws.args, 'run', 'all'])
  expect(r.code, r.stderr).toBe(0)
  server = startTides([...ws.args, 'serve', '--port', '0', '--no-schedules'])
  await waitFor(() => /dashboard: http:\/\/127\.0\.0\.1:\d+\//.test(server.stderr()), 60_000, 'the dashboard to listen')
  base = /dashboard: (http:\/\/127\.0\.0\.1:\d+)\//.exec(server.stderr())![1]!
})
afterAll(async () => {
  server?.child.kill('SIGTERM')
  await server?.done
  ws?.cleanup()
})

describe('dashboard load', () => {
  it(`holds ${RATE} requests/s for ${SECONDS} s with zero errors while a run writes`, async () => {
    const paths = ['/', '/healthz', '/api/overview', '/api/states', '/sources', '/api/runs', '/api/sources', '/courses', '/api/courses', '/taxonomy', '/reskilling', '/api/reskilling', '/skills/python', '/api/skills/kubernetes']
    // a second batch of postings lands during the load
    const chunks: Buffer[] = []
    generatePostings({ n: 2000, months: 24, seed: 7, taxonomy: smallTaxonomy(), startIndex: 3000, onlyMonths: [23] }, (b) => chunks.push(Buffer.from(b)))
    fs.appendFileSync(ws.postings, Buffer.concat(chunks))
    const writer = startTides([...ws.args, 'run', 'all', '--wait', '60'])
    const result = await autocannon({
      url: base,
      connections: 50,
      overallRate: RATE,
      duration: SECONDS,
      // `requests` (a cycle of paths) is an autocannon option that bench/autocannon.d.ts leaves out
      requests: paths.map((path) => ({ method: 'GET', path })),
    } as autocannon.Options)
    const run = await writer.done
    process.stderr.write(
      `dashboard load: ${result.requests.total} requests in ${SECONDS} s (${result.requests.average.toFixed(0)}/s), p50 ${result.latency.p50} ms, p99 ${result.latency.p99} ms, ` +
        `max ${result.latency.max} ms, errors ${result.errors}, timeouts ${result.timeouts}, non-2xx ${result.non2xx}; run during load: ${(run.ms / 1000).toFixed(1)} s\n`,
    )
    expect(run.code, run.stderr).toBe(0)
    expect(result.errors).toBe(0)
    expect(result.timeouts).toBe(0)
    expect(result.non2xx).toBe(0)
    expect(result.requests.total).toBeGreaterThanOrEqual(RATE * SECONDS * 0.95)
    // the server still answers
    expect((await fetch(`${base}/healthz`)).status).toBe(200)
  })
})
