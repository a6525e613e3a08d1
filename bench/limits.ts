/**
 * The machine's own limits, measured in the same run as the stage benchmarks so that every figure can
 * be printed as a ratio: raw SQLite insert rate (one prepared statement, one transaction, into a
 * database file on the disk the stages write to) and raw regex tokenisation speed
 * (`/[\p{L}\p{N}+#.]+/gu` with lower-casing) over the benchmark corpus's own posting texts
 * (postingTexts) or, standalone, over posting-like text.
 * Standalone: `npx tsx bench/limits.ts`.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { reportBench } from './report.ts'

/** Deterministic posting-like text of about `bytes` bytes (the same generator the map bench can use). */
export function syntheticText(bytes: number, seed = 1): string {
  const words = [
    'we', 'are', 'looking', 'for', 'an', 'engineer', 'with', 'experience', 'in', 'python', 'sql', 'kubernetes',
    'c++', 'c#', '.net', 'node.js', 'ci/cd', 'communication', 'skills', 'and', 'stakeholder', 'management', 'the',
    'team', 'builds', 'data', 'pipelines', 'on', 'cloud', 'platforms', 'negotiation', 'critical', 'thinking',
    'terraform', 'you', 'will', 'own', 'services', 'end-to-end', 'mentoring', 'juniors', 'agile', 'delivery',
  ]
  let s = seed >>> 0
  const parts: string[] = []
  let size = 0
  while (size < bytes) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0
    const w = words[s % words.length]!
    const cap = (s >>> 16) % 7 === 0
    const word = cap ? w[0]!.toUpperCase() + w.slice(1) : w
    parts.push(word)
    size += word.length + 1
    if ((s >>> 8) % 13 === 0) parts.push('.\n')
  }
  return parts.join(' ')
}

/**
 * The title and description of the postings at the start of a JSON Lines corpus file, up to about
 * `bytes` of text (lines that do not parse are skipped): the text the map stage reads.
 */
export function postingTexts(file: string, bytes: number): string {
  const parts: string[] = []
  let size = 0
  const fd = fs.openSync(file, 'r')
  try {
    const chunk = Buffer.alloc(1 << 20)
    let rest = ''
    while (size < bytes) {
      const read = fs.readSync(fd, chunk, 0, chunk.length, null)
      if (read === 0) break
      const lines = (rest + chunk.toString('utf8', 0, read)).split('\n')
      rest = lines.pop()!
      for (const line of lines) {
        if (size >= bytes) break
        try {
          const posting = JSON.parse(line) as { title?: unknown; description?: unknown }
          const text = `${typeof posting.title === 'string' ? posting.title : ''}\n${typeof posting.description === 'string' ? posting.description : ''}`
          parts.push(text)
          size += Buffer.byteLength(text)
        } catch {
          // not a posting line
        }
      }
    }
  } finally {
    fs.closeSync(fd)
  }
  if (size === 0) throw new Error(`${file}: no posting texts`)
  return parts.join('\n')
}

/** Raw tokenisation MB/s: the regex every matcher must at least pay for. */
export function rawTokeniseMBps(text: string, rounds = 3): number {
  let best = Infinity
  let tokens = 0
  for (let r = 0; r < rounds; r++) {
    const t0 = performance.now()
    const re = /[\p{L}\p{N}+#.]+/gu
    tokens = 0
    for (const m of text.toLowerCase().matchAll(re)) if (m[0].length) tokens++
    best = Math.min(best, performance.now() - t0)
  }
  if (tokens === 0) throw new Error('no tokens')
  return Buffer.byteLength(text) / 1e6 / (best / 1000)
}

/**
 * Raw SQLite inserts/s: one prepared statement, one transaction, WAL + synchronous=NORMAL, into a new
 * database file in `dir` (give the directory the stages' database lives in: the same disk), removed
 * afterwards. The rows are about the size of a mention row.
 */
export function rawInsertRate(dir: string = os.tmpdir(), rows = 200_000): number {
  const file = path.join(dir, `limits-insert-${process.pid}.db`)
  const remove = () => {
    for (const suffix of ['', '-wal', '-shm']) fs.rmSync(file + suffix, { force: true })
  }
  remove()
  const db = new Database(file)
  try {
    db.pragma('journal_mode = WAL')
    db.pragma('synchronous = NORMAL')
    db.exec('CREATE TABLE t (id INTEGER PRIMARY KEY, a TEXT NOT NULL, b INTEGER NOT NULL, c TEXT NOT NULL)')
    const st = db.prepare('INSERT INTO t (a, b, c) VALUES (?, ?, ?)')
    const t0 = performance.now()
    db.transaction(() => {
      for (let i = 0; i < rows; i++) st.run(`source-${i % 7}`, i, 'x'.repeat(64))
    })()
    return rows / ((performance.now() - t0) / 1000)
  } finally {
    db.close()
    remove()
  }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const text = syntheticText(50 * 1024 * 1024)
  const mbps = rawTokeniseMBps(text)
  const inserts = rawInsertRate()
  reportBench('limits', [
    { figure: 'raw regex tokenisation', value: mbps, unit: 'MB/s' },
    { figure: 'raw SQLite insert (prepared, one transaction, file in the temporary directory)', value: inserts, unit: 'rows/s' },
  ])
}
