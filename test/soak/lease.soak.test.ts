/**
 * The pipeline lock's lease: a holder that is alive but stuck (SIGSTOP) keeps the lock only until its
 * lease runs out (60 s without renewal); a run started with --wait then takes over and works.
 */
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { makeWorkspace, query, sleep, startScript, startTides, waitFor, type Workspace } from '../reliability/helpers.ts'

const HOLD = path.join(import.meta.dirname, '..', 'reliability', 'fixtures', 'hold.ts')
let ws: Workspace
beforeAll(() => {
  ws = makeWorkspace({ n: 500, months: 6, name: 'lease' })
  openDb(ws.db).close()
})
afterAll(() => ws?.cleanup())

describe('lock lease', () => {
  it('a stuck (stopped) holder loses the lock when its lease expires; a waiting run takes over', async () => {
    const holder = startScript(HOLD, [ws.db, 'lock'])
    await waitFor(() => holder.stdout().includes('ready'), 60_000, 'the lock holder')
    const expires = query<{ expires_at: number }>(ws.db, "SELECT expires_at FROM locks WHERE name = 'pipeline'")[0]!.expires_at
    holder.child.kill('SIGSTOP')
    try {
      const started = Date.now()
      const waiting = startTides([...ws.args, 'run', 'all', '--wait', '180'])
      await sleep(5000)
      // still refused while the lease runs, although the holder does nothing
      expect(waiting.child.exitCode).toBeNull()
      const end = await waiting.done
      expect(end.code, end.stderr).toBe(0)
      // it took over only once the lease had run out (the holder never renewed it)
      expect(Date.now()).toBeGreaterThanOrEqual(expires)
      expect(Date.now() - started).toBeLessThan(180_000)
      expect(query<{ n: number }>(ws.db, 'SELECT COUNT(*) AS n FROM documents')[0]!.n).toBe(500)
    } finally {
      holder.child.kill('SIGCONT')
      holder.child.kill('SIGKILL')
      await holder.done
    }
  })
})
