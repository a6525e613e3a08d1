import { spawn } from 'node:child_process'
import crypto from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { contentHash, type Db, openDb } from '../../src/db/connection.ts'
import { ingestSources } from '../../src/ingest/stage.ts'
import { type PostingLine, postingsWithReposts, rng, toJsonLines } from './corpus.ts'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-crash-'))
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))
const CHILD = path.join(import.meta.dirname, 'crash-child.ts')

/** Starts the child; resolves when it exits (killed or done). `onReady` runs when it prints "ready". */
function child(dbFile: string, file: string, onReady: (kill: () => void) => void): Promise<{ code: number | null; signal: string | null; out: string }> {
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, ['--import', 'tsx', CHILD, dbFile, file], { stdio: ['ignore', 'pipe', 'pipe'] })
    let out = ''
    let err = ''
    let ready = false
    p.stdout.on('data', (d: Buffer) => {
      out += d.toString()
      if (!ready && out.includes('ready\n')) {
        ready = true
        onReady(() => p.kill('SIGKILL'))
      }
    })
    p.stderr.on('data', (d: Buffer) => (err += d.toString()))
    p.on('error', reject)
    p.on('exit', (code, signal) => (code && code !== 0 ? reject(new Error(`child failed (${code}): ${err}`)) : resolve({ code, signal, out })))
  })
}

const TABLES = ['documents', 'document_sketches']

/** The stored state a crash must not change: documents, sketches, and the band rows of both levels as one set. */
function state(db: Db): string {
  const bands = db.prepare('SELECT key, document_id FROM document_bands UNION SELECT key, document_id FROM document_bands_recent ORDER BY 1, 2').raw().all()
  return `${contentHash(db, TABLES)}:${crypto.createHash('sha256').update(JSON.stringify(bands)).digest('hex')}`
}

/**
 * Ingests `lines` after the first `prefix` (stored first, cleanly, from another source) once in this
 * process and once in a child killed at random points and restarted; both must end the same.
 */
async function killedAndRestarted(name: string, lines: readonly PostingLine[], prefix: number, seed: number): Promise<{ clean: Db; crashed: Db }> {
  const file = path.join(dir, `${name}.jsonl`)
  fs.writeFileSync(file, toJsonLines(lines.slice(prefix)))
  const first = path.join(dir, `${name}-first.jsonl`)
  fs.writeFileSync(first, toJsonLines(lines.slice(0, prefix)))
  const crashed = path.join(dir, `${name}-crashed.db`)
  const clean = openDb(path.join(dir, `${name}-clean.db`))
  for (const db of [clean, openDb(crashed)]) {
    if (prefix > 0) await ingestSources(db, parseConfig({ ingest: { batchSize: 200 }, sources: [{ id: 'first', kind: 'jsonl', location: first }] }))
    if (db !== clean) db.close()
  }

  // the clean run, in this process; its duration sets the range of kill times
  const t0 = performance.now()
  await ingestSources(clean, parseConfig({ ingest: { batchSize: 200 }, sources: [{ id: 'big', kind: 'jsonl', location: file }] }))
  const cleanMs = performance.now() - t0
  expect(clean.prepare('SELECT COUNT(*) FROM documents').pluck().get()).toBe(lines.length)

  const rand = rng(seed)
  const seenCounts: number[] = []
  for (let k = 0; k < 3; k++) {
    // kill once the stored count passes a random target, wherever the child then is: reading,
    // deduplicating, inside a transaction or committing one
    const target = prefix + Math.floor((0.1 + 0.8 * rand()) * (lines.length - prefix))
    let stop = () => {}
    const r = await child(crashed, file, (kill) => {
      const reader = openDb(crashed, { readonly: true })
      stop = () => {
        clearInterval(timer)
        if (reader.open) reader.close()
      }
      const timer = setInterval(() => {
        const n = reader.prepare('SELECT COUNT(*) FROM documents').pluck().get() as number
        if (n >= target) {
          stop()
          // a random further wait inside the next batch
          setTimeout(kill, rand() * 0.05 * cleanMs)
        }
      }, 10)
    })
    stop()
    const db = openDb(crashed)
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok')
    seenCounts.push(db.prepare('SELECT COUNT(*) FROM documents').pluck().get() as number)
    db.close()
    if (r.signal === null) break // it finished before the kill landed
  }
  // at least one kill landed in the middle of the file (documents stored, not all of them)
  expect(seenCounts.some((n) => n > prefix && n < lines.length)).toBe(true)
  const last = await child(crashed, file, () => {})
  expect(last.signal).toBeNull()
  return { clean, crashed: openDb(crashed) }
}

describe('crash safety of ingest', () => {
  it('SIGKILLed at random points and restarted, it ends with exactly the documents of one clean run', async () => {
    const { lines } = postingsWithReposts(99, 4000, 0.1, [1, 2, 4])
    const { clean, crashed: db } = await killedAndRestarted('big', lines, 0, 2024)
    expect(clean.prepare('SELECT COUNT(*) FROM documents WHERE duplicate_of IS NOT NULL').pluck().get()).toBeGreaterThan(150)
    expect(state(db)).toBe(state(clean))
    // the restart resumed from the committed cursor instead of rereading from the start
    const details = (db.prepare("SELECT details_json FROM job_runs WHERE status != 'failed' ORDER BY id").pluck().all() as string[]).map((d) => JSON.parse(d))
    expect(details.some((d) => d.resumedAt && d.resumedAt.offset > 0)).toBe(true)
    clean.close()
    db.close()
  })

  it('the same for a small run after a large one, whose band rows go to the recent level', async () => {
    const { lines } = postingsWithReposts(98, 4000, 0.1, [1, 2, 4])
    const { clean, crashed: db } = await killedAndRestarted('small', lines, 3600, 77)
    // the small run's rows are in the recent level (400 postings of 4,000: within an eighth)
    expect(clean.prepare('SELECT COUNT(*) FROM document_bands_recent').pluck().get()).toBeGreaterThan(3000)
    expect(clean.prepare('SELECT COUNT(*) FROM documents WHERE id > 3600 AND duplicate_of IS NOT NULL').pluck().get()).toBeGreaterThan(15)
    expect(state(db)).toBe(state(clean))
    clean.close()
    db.close()
  })
})
