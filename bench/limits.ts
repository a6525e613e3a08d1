/**
 * The machine's own limits, measured in the same run as the stage benchmarks so that every figure can
 * be printed as a ratio: raw SQLite insert rate (one prepared statement, one transaction) and raw regex
 * tokenisation speed (`/[\p{L}\p{N}+#.]+/gu` with lower-casing) over posting-like text.
 * Standalone: `npx tsx bench/limits.ts`.
 */
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

/** Raw SQLite inserts/s: one prepared statement, one transaction, WAL + synchronous=NORMAL. */
export function rawInsertRate(rows = 200_000): number {
  const db = new Database(':memory:')
  db.pragma('journal_mode = WAL')
  db.pragma('synchronous = NORMAL')
  db.exec('CREATE TABLE t (id INTEGER PRIMARY KEY, a TEXT NOT NULL, b INTEGER NOT NULL, c TEXT NOT NULL)')
  const st = db.prepare('INSERT INTO t (a, b, c) VALUES (?, ?, ?)')
  const t0 = performance.now()
  db.transaction(() => {
    for (let i = 0; i < rows; i++) st.run(`source-${i % 7}`, i, 'x'.repeat(64))
  })()
  const rate = rows / ((performance.now() - t0) / 1000)
  db.close()
  return rate
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const text = syntheticText(50 * 1024 * 1024)
  const mbps = rawTokeniseMBps(text)
  const inserts = rawInsertRate()
  reportBench('limits', [
    { figure: 'raw regex tokenisation', value: mbps, unit: 'MB/s' },
    { figure: 'raw SQLite insert (prepared, one transaction)', value: inserts, unit: 'rows/s' },
  ])
}
