/**
 * Mapping throughput: MB/s of posting text mapped with the shipped taxonomy and with a generated
 * taxonomy of 20,000 concepts / 80,000 labels, on one core, printed beside the raw speed of the plain
 * regex tokeniser (`/[\p{L}\p{N}+#.]+/gu` with lower-casing) over the same text in the same run;
 * the cost of 80,000 against 1,000 labels (on the generated postings, where the larger taxonomy also
 * finds many more matches, and on plain posting-like text, where neither does); and mapping spread
 * over worker threads. Figures are best of three rounds; on a loaded machine they vary a lot.
 * Standalone: `npx tsx bench/map.ts [--mb 16]`.
 */
import { parseArgs } from 'node:util'
import { generatePostings, generateTaxonomy, type GeneratedTaxonomy } from './corpus.ts'
import { rawTokeniseMBps, syntheticText } from './limits.ts'
import { reportBench, type Figure } from './report.ts'
import { shippedMatcher } from '../src/taxonomy/index.ts'
import { Matcher, type MapInput } from '../src/taxonomy/matcher.ts'
import { MapperPool, mapperSource } from '../src/taxonomy/parallel.ts'
import { defaultThreads } from '../src/util/ts-worker.ts'
import { buildTaxonomy } from '../src/taxonomy/validate.ts'
import { storedRows } from '../src/taxonomy/rows.ts'
import type { Taxonomy } from '../src/taxonomy/types.ts'

const { values } = parseArgs({ options: { mb: { type: 'string' } } })
const targetMB = Number(values.mb ?? 16)

function toTaxonomy(g: GeneratedTaxonomy): Taxonomy {
  return buildTaxonomy(g.concepts.map((c) => ({ ...c, source: { file: 'generated', line: 0 } }))).taxonomy
}

/** Posting texts (title and description) from the shared corpus generator, about `mb` MB. */
function postingTexts(taxonomy: GeneratedTaxonomy, mb: number): string[] {
  const texts: string[] = []
  let pending = ''
  generatePostings({ n: Math.ceil((mb * 1e6) / 2000), months: 24, seed: 11, taxonomy, textBytes: 2000 }, (chunk) => {
    pending += chunk.toString('utf8')
    const lines = pending.split('\n')
    pending = lines.pop() ?? ''
    for (const line of lines) {
      if (!line) continue
      const o = JSON.parse(line) as { title?: string; description?: string }
      texts.push(`${o.title ?? ''}\n${o.description ?? ''}`)
    }
  })
  return texts
}

function bytesOf(texts: readonly string[]): number {
  let n = 0
  for (const t of texts) n += Buffer.byteLength(t)
  return n
}

/**
 * Best of `rounds` timings of mapping every text: `core` counts matches only; `rows` builds what
 * the map stage stores (presence, counts, first offsets; no roll-up); `spans` builds the full result
 * with every span (what `tides map` prints).
 */
function mapMBps(matcher: Matcher, texts: readonly string[], bytes: number, mode: 'core' | 'rows' | 'spans', rounds = 3): number {
  let best = Infinity
  let sink = 0
  for (let r = 0; r < rounds; r++) {
    const t0 = performance.now()
    if (mode === 'spans') for (const t of texts) sink += matcher.mapText(t).mentions.length
    else if (mode === 'rows') for (const t of texts) sink += storedRows(matcher, { text: t }).length
    else for (const t of texts) sink += matcher.countMatches(t)
    best = Math.min(best, performance.now() - t0)
  }
  if (sink < 0) throw new Error('unreachable')
  return bytes / 1e6 / (best / 1000)
}

function timed<T>(fn: () => T): { value: T; ms: number } {
  const t0 = performance.now()
  const value = fn()
  return { value, ms: performance.now() - t0 }
}

const generated = generateTaxonomy({ concepts: 20_000, labels: 80_000, seed: 7 })
const texts = postingTexts(generated, targetMB)
const joined = texts.join('\n')
const bytes = bytesOf(texts)
process.stderr.write(`map bench: ${texts.length} postings, ${(bytes / 1e6).toFixed(1)} MB\n`)

const raw = rawTokeniseMBps(joined)

const shipped = timed(() => shippedMatcher().matcher)
const shippedCore = mapMBps(shipped.value, texts, bytes, 'core')
const shippedFull = mapMBps(shipped.value, texts, bytes, 'rows')
const shippedSpans = mapMBps(shipped.value, texts, bytes, 'spans')

const big = timed(() => Matcher.build(toTaxonomy(generated)))
const bigCore = mapMBps(big.value, texts, bytes, 'core')
const bigFull = mapMBps(big.value, texts, bytes, 'rows')

// 1,000 against 80,000 labels, both generated the same way and without the shipped concepts
const small = Matcher.build(toTaxonomy(generateTaxonomy({ concepts: 250, labels: 1_000, seed: 7, shipped: [] })))
const large = Matcher.build(toTaxonomy(generateTaxonomy({ concepts: 20_000, labels: 80_000, seed: 7, shipped: [] })))
const smallCore = mapMBps(small, texts, bytes, 'core')
const largeCore = mapMBps(large, texts, bytes, 'core')
const matchesIn = (m: Matcher, t: readonly string[]) => t.reduce((n, x) => n + m.countMatches(x), 0)
// the same comparison on posting-like text that neither taxonomy has many labels in, so that the
// per-token cost shows apart from the cost of the matches themselves
const plain = Array.from({ length: texts.length }, (_, i) => syntheticText(2000, i + 1))
const plainBytes = bytesOf(plain)
const smallPlain = mapMBps(small, plain, plainBytes, 'core')
const largePlain = mapMBps(large, plain, plainBytes, 'core')

// worker threads over the 80,000-label taxonomy (each builds its matcher once)
const threads = defaultThreads()
const bigTaxonomy = toTaxonomy(generated)
const poolStart = performance.now()
const pool = await MapperPool.start(mapperSource(bigTaxonomy, null, '(none)'), threads)
const poolReady = performance.now() - poolStart
const inputs: MapInput[] = texts.map((text) => ({ text }))
// warm every worker's JIT as the one-thread figures were warmed (their best of three rounds)
await Promise.all(Array.from({ length: pool.size * 2 }, (_, i) => pool.mapRows(inputs.slice(i * 200, i * 200 + 200))))
const t0 = performance.now()
const batches: Promise<unknown>[] = []
for (let i = 0; i < inputs.length; i += 500) batches.push(pool.mapRows(inputs.slice(i, i + 500)))
await Promise.all(batches)
const parallel = bytes / 1e6 / ((performance.now() - t0) / 1000)
await pool.close()

const figures: Figure[] = [
  { figure: 'text mapped', value: bytes / 1e6, unit: 'MB' },
  { figure: 'raw regex tokeniser (same text)', value: raw, unit: 'MB/s' },
  { figure: `shipped taxonomy (${shipped.value.labelCount} labels): match`, value: shippedCore, unit: 'MB/s' },
  { figure: 'shipped taxonomy: match, ratio to raw', value: shippedCore / raw, unit: '', goal: '>= 0.35', met: shippedCore / raw >= 0.35 },
  { figure: 'shipped taxonomy: mapping to mention rows', value: shippedFull, unit: 'MB/s' },
  { figure: 'shipped taxonomy: mention rows, ratio to raw', value: shippedFull / raw, unit: '', goal: '>= 0.35', met: shippedFull / raw >= 0.35 },
  { figure: 'shipped taxonomy: with every span object', value: shippedSpans, unit: 'MB/s' },
  { figure: 'shipped taxonomy: build once', value: shipped.ms, unit: 'ms' },
  { figure: `20,000 concepts (${big.value.labelCount} labels): match`, value: bigCore, unit: 'MB/s' },
  { figure: '20,000 concepts: match, ratio to raw', value: bigCore / raw, unit: '', goal: '>= 0.35', met: bigCore / raw >= 0.35 },
  { figure: '20,000 concepts: mapping to mention rows', value: bigFull, unit: 'MB/s' },
  { figure: '20,000 concepts: mention rows, ratio to raw', value: bigFull / raw, unit: '', goal: '>= 0.35', met: bigFull / raw >= 0.35 },
  { figure: '20,000 concepts: build once', value: big.ms, unit: 'ms' },
  { figure: `${small.labelCount} labels: match (${matchesIn(small, texts)} matches)`, value: smallCore, unit: 'MB/s' },
  { figure: `${large.labelCount} labels: match (${matchesIn(large, texts)} matches)`, value: largeCore, unit: 'MB/s' },
  { figure: 'speed with 80,000 labels / with 1,000 labels', value: largeCore / smallCore, unit: '' },
  { figure: `plain text, ${small.labelCount} labels (${matchesIn(small, plain)} matches)`, value: smallPlain, unit: 'MB/s' },
  { figure: `plain text, ${large.labelCount} labels (${matchesIn(large, plain)} matches)`, value: largePlain, unit: 'MB/s' },
  { figure: 'plain text: 80,000 labels / 1,000 labels', value: largePlain / smallPlain, unit: '', goal: '>= 0.8 (cost does not grow with labels)', met: largePlain / smallPlain >= 0.8 },
  { figure: `worker threads (${threads}), 20,000 concepts: mention rows`, value: parallel, unit: 'MB/s' },
  { figure: 'worker threads / one thread (mention rows)', value: parallel / bigFull, unit: '' },
  { figure: 'worker threads: start and build matchers', value: poolReady, unit: 'ms' },
]
reportBench('map', figures)
