/**
 * Concurrency, with real processes: two pipeline runs never overlap (the second refuses with a clear
 * message, or waits with --wait), the lock of a holder killed with SIGKILL is taken over, and the
 * dashboard keeps answering while another process writes (WAL readers are not blocked by a writer).
 */
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { makeWorkspace, query, sleep, startScript, startTides, tides, waitFor, type Workspace } from './helpers.ts'

const HOLD = path.join(import.meta.dirname, 'fixtures', 'hold.ts')
const BUSY = /another pipeline run is in progress \(process \d+, lease until \d{4}-\d\d-\d\dT[\d:.]+Z\); try again when it ends/

let ws: Workspace
beforeAll(() => {
  ws = makeWorkspace({ n: 1000, months: 12, name: 'conc', batchSize: 250 })
  openDb(ws.db).close()
})
afterAll(() => ws?.cleanup())

function lockHolderPid(): number | null {
  const rows = query<{ pid: number }>(ws.db, "SELECT pid FROM locks WHERE name = 'pipeline'")
  return rows[0]?.pid ?? null
}

async function holdLock(): Promise<ReturnType<typeof startScript>> {
  const holder = startScript(HOLD, [ws.db, 'lock'])
  await waitFor(() => holder.stdout().includes('ready'), 30_000, 'the lock holder')
  return holder
}

describe('two pipeline runs at once', () => {
  it('a second `tides run all` refuses with a clear message while another process holds the lock', async () => {
    const holder = await holdLock()
    try {
      const second = await tides([...ws.args, 'run', 'all'])
      expect(second.code).toBe(1)
      expect(second.stderr).toMatch(BUSY)
      expect(second.stderr).toContain(`process ${holder.child.pid}`)
      expect(second.stdout).toBe('')
    } finally {
      holder.child.kill('SIGTERM')
      await holder.done
    }
  })

  it('with --wait it waits for the holder to finish, then runs', async () => {
    const holder = await holdLock()
    const waiting = startTides([...ws.args, 'run', 'ingest', '--wait', '120'])
    // it must still be waiting while the lock is held
    await sleep(2500)
    expect(waiting.child.exitCode).toBeNull()
    expect(query<{ n: number }>(ws.db, "SELECT COUNT(*) AS n FROM job_runs WHERE stage = 'ingest'")[0]!.n).toBe(0)
    const released = Date.now()
    holder.child.kill('SIGTERM')
    await holder.done
    const result = await waiting.done
    expect(result.code, result.stderr).toBe(0)
    // its work started only after the holder let go: every ingest run it recorded began after then
    const starts = query<{ started_at: string }>(ws.db, "SELECT started_at FROM job_runs WHERE stage = 'ingest'").map((r) => Date.parse(r.started_at))
    expect(starts.length).toBeGreaterThan(0)
    for (const start of starts) expect(start).toBeGreaterThanOrEqual(released)
    expect(query<{ n: number }>(ws.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n).toBeGreaterThan(0)
  })

  it('an import refuses while a run holds the lock (nothing imported), and with --wait imports once it is free', async () => {
    const extra = path.join(ws.dir, 'extra.jsonl')
    const lines = fs.readFileSync(ws.postings, 'utf8').split('\n').filter(Boolean).slice(0, 20)
    // new identifiers and texts of their own, so that every line is a new document (no duplicate)
    const word = (i: number, k: number) => `w${((i * 7919 + k * 104729) % 99991).toString(36)}`
    const fresh = lines.map((line, i) => ({
      ...JSON.parse(line),
      identifier: `extra-${i}`,
      title: `Extra posting ${i} ${word(i, 0)}`,
      description: Array.from({ length: 60 }, (_, k) => word(i, k + 1)).join(' '),
    }))
    fs.writeFileSync(extra, fresh.map((posting) => JSON.stringify(posting)).join('\n') + '\n')
    const count = () => query<{ n: number }>(ws.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n
    const holder = await holdLock()
    const before = count()
    try {
      const refused = await tides([...ws.args, 'import', 'postings', extra])
      expect(refused.code).toBe(1)
      expect(refused.stderr).toMatch(BUSY)
      expect(count()).toBe(before)
      const waiting = startTides([...ws.args, 'import', 'postings', extra, '--wait', '120'])
      await sleep(2500)
      expect(waiting.child.exitCode).toBeNull()
      expect(count()).toBe(before)
      holder.child.kill('SIGTERM')
      await holder.done
      const done = await waiting.done
      expect(done.code, done.stderr).toBe(0)
      expect(done.stderr).toContain('20 postings imported of 20 read')
      expect(count()).toBe(before + 20)
    } finally {
      holder.child.kill('SIGKILL')
      await holder.done
    }
  })

  it('the lock of a holder killed with SIGKILL is taken over at once', async () => {
    const holder = await holdLock()
    expect(lockHolderPid()).toBe(holder.child.pid)
    holder.child.kill('SIGKILL')
    const end = await holder.done
    expect(end.signal).toBe('SIGKILL')
    // the dead holder's row is still there; the next run sees the process is gone and takes over
    expect(lockHolderPid()).toBe(holder.child.pid)
    const next = await tides([...ws.args, 'run', 'all'])
    expect(next.code, next.stderr).toBe(0)
    expect(next.stderr).not.toMatch(BUSY)
    expect(lockHolderPid()).toBeNull()
  })

  it('two real runs started together: exactly one works, the other refuses; nothing is stored twice', async () => {
    const fresh = makeWorkspace({ n: 4000, months: 12, name: 'conc2', batchSize: 200 })
    try {
      openDb(fresh.db).close()
      const first = startTides([...fresh.args, 'run', 'all'])
      // start the second once the first holds the lock and is still ingesting
      await waitFor(() => query(fresh.db, "SELECT 1 FROM locks WHERE name = 'pipeline'").length > 0 || first.child.exitCode !== null, 60_000, 'the first run to take the lock', 5)
      expect(first.child.exitCode, 'the first run ended before the second could start: make the input larger').toBeNull()
      const second = await tides([...fresh.args, 'run', 'all'])
      const firstEnd = await first.done
      expect(firstEnd.code, firstEnd.stderr).toBe(0)
      expect(second.code).toBe(1)
      expect(second.stderr).toMatch(BUSY)
      const docs = query<{ n: number; ids: number }>(fresh.db, 'SELECT COUNT(*) AS n, COUNT(DISTINCT external_id) AS ids FROM documents')[0]!
      expect(docs.n).toBe(4000)
      expect(docs.ids).toBe(4000)
      const runs = query<{ status: string }>(fresh.db, "SELECT status FROM job_runs WHERE stage = 'ingest'")
      expect(runs.map((r) => r.status)).toEqual(['ok'])
    } finally {
      fresh.cleanup()
    }
  })
})

describe('the dashboard during a run', () => {
  it('keeps answering reads while another process holds a write transaction (WAL)', async () => {
    const server = startTides([...ws.args, 'serve', '--port', '0', '--no-schedules'])
    let writer: ReturnType<typeof startScript> | undefined
    try {
      await waitFor(() => /dashboard: http:\/\/127\.0\.0\.1:\d+\//.test(server.stderr()), 30_000, 'the dashboard to listen')
      const base = /dashboard: (http:\/\/127\.0\.0\.1:\d+\/)/.exec(server.stderr())![1]!
      writer = startScript(HOLD, [ws.db, 'write', '6000'])
      await waitFor(() => writer!.stdout().includes('ready'), 30_000, 'the writer')
      // while the write transaction is open: every page and API read answers, promptly
      const paths = ['healthz', 'api/runs', 'api/sources', 'api/overview', '', 'sources']
      for (const p of paths) {
        const res = await fetch(base + p, { signal: AbortSignal.timeout(4000) })
        expect(res.status, `${p}: ${await res.clone().text()}`).toBe(200)
        await res.arrayBuffer()
      }
      // the writer still runs, so its transaction was open during every read above
      expect(writer.child.exitCode).toBeNull()
      const end = await writer.done
      expect(end.code, end.stderr).toBe(0)
    } finally {
      writer?.child.kill('SIGTERM')
      server.child.kill('SIGTERM')
      await Promise.all([writer?.done, server.done])
    }
  })
})

describe('a run during tides serve', () => {
  it('a scheduled run in the server waits for a held lock while the dashboard answers, then works; a CLI run waits for it', async () => {
    const fresh = makeWorkspace({ n: 1500, months: 12, name: 'conc3', batchSize: 250 })
    // the source runs every two seconds from the server's schedules
    const config = JSON.parse(fs.readFileSync(fresh.config, 'utf8')) as { sources: { schedule?: string }[] }
    config.sources[0]!.schedule = '*/2 * * * * *'
    fs.writeFileSync(fresh.config, JSON.stringify(config))
    openDb(fresh.db).close()
    const holder = startScript(HOLD, [fresh.db, 'lock'])
    let server: ReturnType<typeof startTides> | undefined
    try {
      await waitFor(() => holder.stdout().includes('ready'), 30_000, 'the lock holder')
      server = startTides([...fresh.args, 'serve', '--port', '0'])
      await waitFor(() => /dashboard: http:\/\/127\.0\.0\.1:\d+\//.test(server!.stderr()), 60_000, 'the dashboard to listen')
      const base = /dashboard: (http:\/\/127\.0\.0\.1:\d+\/)/.exec(server.stderr())![1]!
      // a scheduled run has fired and waits for the lock: nothing ingested, the dashboard answers
      await sleep(4000)
      expect(query<{ n: number }>(fresh.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n).toBe(0)
      for (const p of ['healthz', 'api/runs', '']) {
        const res = await fetch(base + p, { signal: AbortSignal.timeout(4000) })
        expect(res.status, p).toBe(200)
        await res.arrayBuffer()
      }
      expect(server.child.exitCode).toBeNull()
      // the holder goes: the waiting scheduled run takes the lock and ingests everything
      holder.child.kill('SIGTERM')
      await holder.done
      await waitFor(() => query<{ n: number }>(fresh.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n === 1500, 120_000, 'the scheduled run to ingest')
      // a CLI run beside the server's schedules: it waits its turn instead of failing
      const cli = await tides([...fresh.args, 'run', 'all', '--wait', '120'])
      expect(cli.code, cli.stderr).toBe(0)
      expect(query<{ n: number; ids: number }>(fresh.db, 'SELECT COUNT(*) AS n, COUNT(DISTINCT external_id) AS ids FROM documents')[0]).toEqual({ n: 1500, ids: 1500 })
      expect(server.child.exitCode).toBeNull()
    } finally {
      holder.child.kill('SIGTERM')
      server?.child.kill('SIGTERM')
      await Promise.all([holder.done, server?.done])
      fresh.cleanup()
    }
  })
})
