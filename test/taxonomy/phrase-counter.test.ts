import { describe, it, expect } from 'vitest'
import fc from 'fast-check'
import { CANDIDATE_STOPWORDS, documentPhrases } from '../../src/taxonomy/candidates.ts'
import { shippedMatcher } from '../../src/taxonomy/index.ts'
import { PhraseCounter, TOKEN_MIDDLE, TOKEN_STOP, TOKEN_VALID } from '../../src/taxonomy/phrase-counter.ts'
import type { Matcher } from '../../src/taxonomy/matcher.ts'
import { hashString, foldString } from '../../src/taxonomy/chars.ts'
import { scanText, TokenBuffer, Vocabulary } from '../../src/taxonomy/tokenizer.ts'

const WORDY = /^[\p{L}][\p{L}\p{N}+#./&]*$|^[\p{N}]+[\p{L}][\p{L}\p{N}]*$/u
const classify = (w: string) =>
  (WORDY.test(w) && !(w.length < 2 && !/[+#]/.test(w)) ? TOKEN_VALID : 0) |
  (CANDIDATE_STOPWORDS.has(w) ? TOKEN_STOP : 0) |
  (['of', 'and', 'as', '&'].includes(w) ? TOKEN_MIDDLE : 0)

/** The counting the phrase counter replaces: phrase strings per document in two maps, singletons dropped beyond the bound. */
function referenceCounts(matcher: Matcher, docs: { text: string; recent: boolean }[], maxPhrases: number) {
  const recentDf = new Map<string, number>()
  const earlierDf = new Map<string, number>()
  for (const d of docs) {
    const target = d.recent ? recentDf : earlierDf
    for (const p of documentPhrases(matcher, d.text).phrases.keys()) target.set(p, (target.get(p) ?? 0) + 1)
    if (recentDf.size + earlierDf.size > maxPhrases) {
      for (const m of [recentDf, earlierDf]) for (const [p, n] of m) if (n === 1) m.delete(p)
    }
  }
  return new Map([...recentDf].map(([term, recent]) => [term, { recent, earlier: earlierDf.get(term) ?? 0 }]))
}

function counted(matcher: Matcher, docs: { text: string; recent: boolean }[], maxPhrases: number) {
  const counter = new PhraseCounter(classify, maxPhrases)
  for (const d of docs) {
    const { text, tokens, covered } = matcher.coverTokens(d.text)
    counter.addDocument(text, tokens, covered, d.recent)
  }
  return { counter, counts: new Map([...counter.recentCounts()].map((c) => [c.term, { recent: c.recent, earlier: c.earlier }])) }
}

describe('phrase counter', () => {
  const { matcher } = shippedMatcher()
  // words of both kinds: taxonomy labels (covered), stop words, connectors, tool-like names, digits, non-ASCII
  const words = [
    'Kubernetes', 'Terraform', 'Python', 'SQL', 'the', 'and', 'of', 'as', 'with', 'we', 'data', 'platform', 'ledger',
    'Quillstream', 'orchestration', 'Brackenfold', 'mesh', 'C++', 'C#', 'Node.js', 'CI/CD', '2024', 'x', 'K8s',
    'Ölbaum', 'straße', 'ΟΔΟΣ', 'infrastructure', 'code', 'e.g.', 'R&D', 'skills', 'observability', 'vector',
  ]
  const seps = [' ', ' ', ' ', ', ', '. ', '; ', '\n', ' - ', ' / ', ': ']
  const docArb = fc.record({
    parts: fc.array(fc.tuple(fc.constantFrom(...words), fc.constantFrom(...seps)), { minLength: 0, maxLength: 40 }),
    recent: fc.boolean(),
  }).map(({ parts, recent }) => ({ text: parts.map(([w, s]) => w + s).join(''), recent }))

  it('counts every phrase in the same documents as counting the strings of documentPhrases', () => {
    fc.assert(
      fc.property(fc.array(docArb, { minLength: 1, maxLength: 30 }), (docs) => {
        expect(counted(matcher, docs, 2_000_000).counts).toEqual(referenceCounts(matcher, docs, 2_000_000))
      }),
      { seed: 20261202, numRuns: 150 },
    )
  })

  it('drops singletons beyond the bound as the string counting does, and reuses the freed ids', () => {
    fc.assert(
      fc.property(fc.array(docArb, { minLength: 5, maxLength: 40 }), fc.integer({ min: 3, max: 40 }), (docs, bound) => {
        expect(counted(matcher, docs, bound).counts).toEqual(referenceCounts(matcher, docs, bound))
      }),
      { seed: 7, numRuns: 150 },
    )
    // many distinct phrases in one-off documents: the ids held stay near the bound, not the total
    const counter = new PhraseCounter(classify, 50)
    for (let i = 0; i < 400; i++) {
      const { text, tokens, covered } = matcher.coverTokens(`zeta${i} widget${i} gadget${i}. common widget platform`)
      counter.addDocument(text, tokens, covered, i % 2 === 0)
    }
    expect(counter.phrasesHeld).toBeLessThan(200)
    expect([...counter.recentCounts()].find((c) => c.term === 'common widget platform')).toEqual({ term: 'common widget platform', recent: 200, earlier: 200 })
  })

  it('keeps apart phrases of the same words in another order or length', () => {
    const { counts } = counted(matcher, [
      { text: 'vector mesh ledger', recent: true },
      { text: 'mesh vector ledger', recent: true },
      { text: 'ledger mesh', recent: false },
    ], 100)
    expect(counts.get('vector mesh ledger')).toEqual({ recent: 1, earlier: 0 })
    expect(counts.get('mesh vector ledger')).toEqual({ recent: 1, earlier: 0 })
    expect(counts.get('mesh')).toEqual({ recent: 2, earlier: 1 })
    expect(counts.has('ledger mesh')).toBe(false) // earlier only: not among the recent counts
  })
})

describe('token hashes in the scan', () => {
  it('are the folded hash of each token text, also for the parts of a split compound', () => {
    const v = new Vocabulary()
    v.add('ci/cd')
    const b = new TokenBuffer()
    const text = 'Python/Java and CI/CD, C++ .NET ÖLBAUM Python+SQL e.g. R&D'
    scanText(text, v, b)
    expect(b.count).toBeGreaterThan(8)
    for (let i = 0; i < b.count; i++) expect(b.hash[i]).toBe(hashString(foldString(text.slice(b.start[i], b.end[i]))))
  })
})
