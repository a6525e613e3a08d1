/**
 * Ingest benchmark: documents/s from JobPosting JSON Lines including dedupe (exact and MinHash LSH
 * near-duplicates), through the `jsonl` source path (one streaming pass) and through
 * `tides import postings` (checked in full first, then stored), each beside the machine's raw
 * SQLite insert rate (one prepared statement, one transaction) as a ratio; recall and precision of
 * the planted reposts; peak RSS. Large files are parsed on a worker thread (ingest.parseWorkerMinBytes),
 * so the CPU time of the writing thread alone is printed too: on a machine shared with other work the
 * wall clock says more about the neighbours than about ingest. Bytes written come from /proc.
 * Standalone: `npx tsx bench/ingest.ts [--n 70000]` (default: the demo's size, ~2,000 a month × 36).
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { parseArgs } from 'node:util'
import { parseConfig } from '../src/config.ts'
import { openDb } from '../src/db/connection.ts'
import { importDocuments } from '../src/ingest/import.ts'
import { exactJaccard, shingleSet, tokenHashes } from '../src/ingest/minhash.ts'
import { ingestSources } from '../src/ingest/stage.ts'
import { rawInsertRate } from './limits.ts'
import { reportBench } from './report.ts'

const WORDS = (
  'we are looking for an engineer analyst designer manager with experience in python sql kubernetes terraform ' +
  'data pipelines cloud platforms stakeholder management communication negotiation critical thinking agile ' +
  'delivery mentoring services security monitoring reporting budgets customers suppliers training quality ' +
  'the team builds runs improves owns supports our cooperative members across regions warehouses stores ' +
  'you will join a friendly group and help us plan test release document review automate migrate scale'
).split(' ')

/** mulberry32 (public domain): small, fast, seeded. */
function rng(seed: number): () => number {
  let s = seed >>> 0
  return () => {
    s = (s + 0x6d2b79f5) >>> 0
    let t = Math.imul(s ^ (s >>> 15), s | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

export interface Corpus {
  file: string
  n: number
  /** [repost line index, original line index] of planted near or exact reposts */
  pairs: [number, number][]
  /** the texts, to compute the true similarity of the planted pairs */
  texts: string[]
}

/** Writes n JobPosting lines (~1.2 KB of text each) over 36 months, about 8 % reposts (2 % exact). */
export function writeCorpus(file: string, n: number, seed = 11): Corpus {
  const rand = rng(seed)
  const texts: string[] = []
  const pairs: [number, number][] = []
  const out = fs.openSync(file, 'w')
  let buf = ''
  for (let i = 0; i < n; i++) {
    let text: string
    const r = rand()
    if (i > 50 && r < 0.08) {
      const orig = i - 1 - Math.floor(rand() * Math.min(i - 1, 400))
      const words = texts[orig]!.split(' ')
      if (r >= 0.02) {
        // a near repost: one to three words changed in ~170 (Jaccard of 4-word shingles about 0.87-0.96)
        for (let k = 0; k < 1 + Math.floor(rand() * 3); k++) words[Math.floor(rand() * words.length)] = `reposted${Math.floor(rand() * 1000)}`
      }
      text = words.join(' ')
      pairs.push([i, orig])
    } else {
      const len = 150 + Math.floor(rand() * 40)
      text = Array.from({ length: len }, () => WORDS[Math.floor(rand() * WORDS.length)]!).join(' ')
    }
    texts.push(text)
    const month = Math.floor((i / n) * 36)
    const day = 1 + Math.floor(rand() * 28)
    const date = `${2022 + Math.floor(month / 12)}-${String((month % 12) + 1).padStart(2, '0')}-${String(day).padStart(2, '0')}`
    buf += JSON.stringify({ '@type': 'JobPosting', identifier: `bench-${i}`, title: 'Cooperative role', description: `<p>${text}</p>`, datePosted: date, skills: 'Python, SQL' }) + '\n'
    if (buf.length > 1 << 20) {
      fs.writeSync(out, buf)
      buf = ''
    }
  }
  fs.writeSync(out, buf)
  fs.closeSync(out)
  return { file, n, pairs, texts }
}

function cpuSeconds(since: NodeJS.CpuUsage): number {
  const u = process.cpuUsage(since)
  return (u.user + u.system) / 1e6
}

/**
 * CPU seconds of the main (writing) thread alone, from /proc (Linux; NaN elsewhere). With the parse
 * worker on, this thread bounds the wall time on an otherwise idle 2-core machine.
 */
function mainThreadCpu(): number {
  try {
    const fields = fs.readFileSync(`/proc/self/task/${process.pid}/stat`, 'utf8').split(') ')[1]!.split(' ')
    return (Number(fields[11]) + Number(fields[12])) / 100
  } catch {
    return NaN
  }
}

/** Bytes this process has caused to be written to storage so far (Linux; NaN elsewhere). */
function bytesWritten(): number {
  try {
    return Number(/write_bytes: (\d+)/.exec(fs.readFileSync('/proc/self/io', 'utf8'))![1])
  } catch {
    return NaN
  }
}

async function main(): Promise<void> {
  const { values } = parseArgs({ options: { n: { type: 'string', default: '70000' } } })
  const n = Number(values.n)
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-bench-ingest-'))
  try {
    const corpus = writeCorpus(path.join(dir, 'postings.jsonl'), n)
    const mb = fs.statSync(corpus.file).size / 1e6

    // source path: one streaming pass with dedupe
    const config = parseConfig({ sources: [{ id: 'bench', kind: 'jsonl', location: corpus.file }] })
    const load = os.loadavg()[0]!
    const db1 = openDb(path.join(dir, 'a.db'))
    let t0 = performance.now()
    let cpu0 = process.cpuUsage()
    let main0 = mainThreadCpu()
    let io0 = bytesWritten()
    const [report] = await ingestSources(db1, config, {})
    const sourceSec = (performance.now() - t0) / 1000
    const sourceCpu = cpuSeconds(cpu0)
    const sourceMain = mainThreadCpu() - main0
    const sourceBytes = bytesWritten() - io0
    if (report!.counts.read !== n) throw new Error(`read ${report!.counts.read} of ${n}`)
    // recall and precision of the planted reposts (line i is document id i + 1)
    const dupOf = new Map<number, number>()
    for (const r of db1.prepare('SELECT id, duplicate_of FROM documents WHERE duplicate_of IS NOT NULL').all() as { id: number; duplicate_of: number }[]) dupOf.set(r.id - 1, r.duplicate_of - 1)
    const root = (i: number): number => dupOf.get(i) ?? i
    // the truth: planted pairs whose 4-word-shingle Jaccard (title and text, as dedupe sees them) is >= 0.9
    const shingles = (i: number) => shingleSet(tokenHashes(`Cooperative role\n${corpus.texts[i]}`), 4)
    const truePairs = corpus.pairs.filter(([rep, orig]) => exactJaccard(shingles(rep), shingles(orig)) >= 0.9)
    const found = truePairs.filter(([rep, orig]) => dupOf.has(rep) && root(rep) === root(orig)).length
    const planted = new Set(corpus.pairs.map(([rep]) => rep))
    const falsePositives = [...dupOf.keys()].filter((i) => !planted.has(i)).length
    db1.close()

    // import path: whole file checked, then stored
    const db2 = openDb(path.join(dir, 'b.db'))
    t0 = performance.now()
    cpu0 = process.cpuUsage()
    main0 = mainThreadCpu()
    io0 = bytesWritten()
    const imp = await importDocuments(db2, config, 'postings', corpus.file, { skipBad: false })
    const importSec = (performance.now() - t0) / 1000
    const importCpu = cpuSeconds(cpu0)
    const importMain = mainThreadCpu() - main0
    const importBytes = bytesWritten() - io0
    if (imp.refused) throw new Error('import refused')
    db2.close()

    const raw = rawInsertRate(dir)
    const sourceRate = n / sourceSec
    const importRate = n / importSec
    reportBench('ingest', [
      { figure: `postings (JSON Lines, ${mb.toFixed(0)} MB)`, value: n, unit: 'docs' },
      { figure: 'jsonl source incl. dedupe', value: sourceRate, unit: 'docs/s', goal: '>= 10,000', met: sourceRate >= 10_000 },
      // on a shared machine the wall clock also counts other processes' time; CPU time does not
      { figure: 'jsonl source incl. dedupe, per CPU second', value: n / sourceCpu, unit: 'docs/s' },
      { figure: 'jsonl source, per CPU second of the writing thread', value: n / sourceMain, unit: 'docs/s' },
      { figure: 'jsonl source, bytes written per posting', value: sourceBytes / n, unit: 'B' },
      { figure: 'import postings (check + store)', value: importRate, unit: 'docs/s' },
      { figure: 'import postings, per CPU second', value: n / importCpu, unit: 'docs/s' },
      { figure: 'import postings, per CPU second of the writing thread', value: n / importMain, unit: 'docs/s' },
      { figure: 'import postings, bytes written per posting', value: importBytes / n, unit: 'B' },
      { figure: 'raw SQLite insert (prepared, one tx)', value: raw, unit: 'rows/s' },
      { figure: 'source rate / raw insert rate', value: sourceRate / raw, unit: 'ratio' },
      { figure: `planted reposts at J >= 0.9 found (of ${truePairs.length})`, value: found / truePairs.length, unit: 'recall' },
      { figure: 'postings wrongly marked reposts', value: falsePositives, unit: 'docs' },
      { figure: `load average at start (${os.cpus().length} cores)`, value: load, unit: '' },
    ])
  } finally {
    fs.rmSync(dir, { recursive: true, force: true })
  }
}

if (import.meta.url === `file://${process.argv[1]}`) await main()
