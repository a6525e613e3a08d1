/**
 * The benchmark corpus generator (bench/corpus.ts) that the scale benchmark, the crash tests and the
 * fuzzers build on: deterministic per seed, the recorded truth equals an independent count of the
 * planted phrases in the written text, and the generated taxonomy is valid for the project's own
 * taxonomy loader with 20,000 concepts, about 80,000 unique labels and resolvable broader links.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { generatePostings, generateTaxonomy, plantedTrends, trendShare, writeTaxonomyCsv } from '../../bench/corpus.ts'
import { loadCsvTaxonomy } from '../../src/taxonomy/index.ts'
import { smallTaxonomy } from './helpers.ts'

function generate(n: number, seed: number, extra: Partial<Parameters<typeof generatePostings>[0]> = {}) {
  const chunks: Buffer[] = []
  const taxonomy = smallTaxonomy()
  const truth = generatePostings({ n, months: 12, seed, taxonomy, ...extra }, (b) => chunks.push(Buffer.from(b)))
  return { text: Buffer.concat(chunks).toString('utf8'), truth, taxonomy }
}

describe('corpus generator', () => {
  it('is deterministic per seed and differs between seeds', () => {
    const a = generate(300, 5).text
    expect(generate(300, 5).text).toBe(a)
    expect(generate(300, 6).text).not.toBe(a)
  })

  it('a continuation (startIndex) asks for the same popular skills as the corpus it continues', () => {
    // the 20 background skills (not planted) named most often, by their preferred labels as whole words
    const top = (text: string, taxonomy: ReturnType<typeof smallTaxonomy>) => {
      const planted = new Set(plantedTrends(taxonomy, 5).map((t) => t.id))
      const words = new Map<string, number>()
      for (const w of text.toLowerCase().split(/[^\p{L}\p{N}+#.-]+/u)) words.set(w, (words.get(w) ?? 0) + 1)
      const counts = taxonomy.concepts.filter((c) => !planted.has(c.id) && !/\s/.test(c.prefLabel)).map((c) => [c.id, words.get(c.prefLabel.toLowerCase()) ?? 0] as const)
      return new Set(counts.sort((a, b) => b[1] - a[1] || (a[0] < b[0] ? -1 : 1)).slice(0, 20).map(([id]) => id))
    }
    const base = generate(2000, 5)
    const next = generate(2000, 5, { startIndex: 1_000_000 })
    expect(next.text).not.toBe(base.text)
    const a = top(base.text, base.taxonomy)
    const shared = [...top(next.text, next.taxonomy)].filter((id) => a.has(id))
    // measured: 19 of 20 shared; 7 when a continuation drew its own popularity order
    expect(shared.length).toBeGreaterThanOrEqual(16)
  })

  it('writes valid JobPosting lines of about 2 KB of text, with unique identifiers', () => {
    const { text, truth } = generate(500, 5)
    const lines = text.trimEnd().split('\n')
    expect(lines).toHaveLength(500)
    const ids = new Set<string>()
    for (const line of lines) {
      const p = JSON.parse(line) as { '@type': string; identifier: string; title: string; description: string; datePosted: string }
      expect(p['@type']).toBe('JobPosting')
      expect(p.datePosted).toMatch(/^\d{4}-\d\d-\d\d$/)
      expect(p.description.length).toBeGreaterThan(1500)
      ids.add(p.identifier)
    }
    expect(ids.size).toBe(500)
    expect(truth.bytes).toBe(Buffer.byteLength(text))
  })

  it('the truth counts of planted phrases equal an independent count in the written text', () => {
    const { text, truth, taxonomy } = generate(1200, 9, { repostRate: 0, nearRepostRate: 0 })
    const trends = plantedTrends(taxonomy, 9)
    const lines = text.trimEnd().split('\n').map((l) => JSON.parse(l) as { title: string; description: string; datePosted: string })
    for (const [t, trend] of trends.entries()) {
      const escaped = trend.phrase.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')
      const re = new RegExp(`(?<![\\p{L}\\p{N}])${escaped}(?![\\p{L}\\p{N}])`, 'iu')
      const counts = new Array<number>(truth.months.length).fill(0)
      for (const p of lines) if (re.test(`${p.title}\n${p.description}`)) counts[truth.months.indexOf(p.datePosted.slice(0, 7))]!++
      expect(counts, trend.id).toEqual(truth.planted[t]!.counts)
    }
    // and the shares follow the planted shapes (loosely: binomial noise on ~100 postings a month)
    const kube = trends.findIndex((t) => t.id === 'kubernetes')
    const first = truth.planted[kube]!.counts.slice(0, 3).reduce((a, b) => a + b, 0) / truth.originals.slice(0, 3).reduce((a, b) => a + b, 0)
    expect(first).toBeCloseTo(trendShare(trends[kube]!, 1, 12), 1)
  })

  it('plants exact and near reposts at the requested rates', () => {
    const { truth } = generate(3000, 3, { repostRate: 0.05, nearRepostRate: 0.05 })
    expect(truth.reposts / 3000).toBeGreaterThan(0.02)
    expect(truth.nearReposts / 3000).toBeGreaterThan(0.02)
    expect(truth.originals.reduce((a, b) => a + b, 0) + truth.reposts + truth.nearReposts).toBe(3000)
  })

  it('the 20,000-concept taxonomy has about 80,000 unique labels and loads without problems', () => {
    const tax = generateTaxonomy({ seed: 7 })
    expect(tax.concepts).toHaveLength(20_000)
    expect(Math.abs(tax.labelCount - 80_000)).toBeLessThan(800)
    // generated labels are unique (case-insensitively) and never repeat a shipped one
    const shipped = new Set(tax.concepts.filter((c) => c.shipped).flatMap((c) => [c.prefLabel, ...c.altLabels, ...c.hiddenLabels].map((l) => l.toLowerCase())))
    const labels = tax.concepts.filter((c) => !c.shipped).flatMap((c) => [c.prefLabel, ...c.altLabels, ...c.hiddenLabels].map((l) => l.toLowerCase()))
    expect(new Set(labels).size).toBe(labels.length)
    expect(labels.filter((l) => shipped.has(l))).toEqual([])
    const ids = new Set(tax.concepts.map((c) => c.id))
    expect(ids.size).toBe(20_000)
    for (const c of tax.concepts) for (const b of c.broader) expect(ids.has(b), `${c.id} -> ${b}`).toBe(true)
    const file = path.join(fs.mkdtempSync(path.join(os.tmpdir(), 'tides-tax-')), 'taxonomy.csv')
    writeTaxonomyCsv(file, tax)
    const loaded = loadCsvTaxonomy(fs.readFileSync(file, 'utf8'), file)
    expect(loaded.problems.filter((p) => !('warning' in p && p.warning))).toEqual([])
    expect(loaded.taxonomy.concepts).toHaveLength(20_000)
    fs.rmSync(path.dirname(file), { recursive: true, force: true })
  })
})
