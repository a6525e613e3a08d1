import { describe, expect, it } from 'vitest'
import {
  bandKeys,
  candidateProbability,
  estimateJaccard,
  exactJaccard,
  fmix32,
  minhashSignature,
  shingleHashes,
  shingleSet,
  signatureFromBytes,
  signatureToBytes,
  tokenHashes,
} from '../../src/ingest/minhash.ts'
import { htmlToText, cleanText, firstInvalidUtf8 } from '../../src/ingest/text.ts'
import { randomText, rng, stringJaccard } from './corpus.ts'

/** Straightforward FNV-1a 32 over UTF-16 code units, written independently of the module's loop. */
function fnv1a(s: string): number {
  let h = 0x811c9dc5
  for (const ch of s) {
    h = (h ^ ch.charCodeAt(0)) >>> 0
    h = Number((BigInt(h) * 16777619n) % 4294967296n)
  }
  return h
}

describe('token hashes (FNV-1a 32)', () => {
  it('match the FNV-1a test vectors and an independent implementation', () => {
    // FNV-1a 32-bit test vectors of the FNV reference code (Noll, "FNV hash" test suite), from memory:
    // "a" -> 0xe40c292c, "foobar" -> 0xbf9cf968; the BigInt implementation above checks them too
    expect(fnv1a('a')).toBe(0xe40c292c)
    expect(fnv1a('foobar')).toBe(0xbf9cf968)
    expect([...tokenHashes('a')]).toEqual([0xe40c292c])
    expect([...tokenHashes('  FooBar!! ')]).toEqual([0xbf9cf968])
    const words = ['senior', 'data', 'engineer', 'm', 'f', '2024']
    expect([...tokenHashes('Senior  Data-Engineer (m/f), 2024')]).toEqual(words.map(fnv1a))
  })

  it('fold case and compatibility forms, and treat letters of any script as word characters', () => {
    // NFKC: full-width "ＳＱＬ" is "SQL"; "ﬁ" ligature is "fi"
    expect([...tokenHashes('ＳＱＬ ﬁle')]).toEqual([...tokenHashes('sql file')])
    expect([...tokenHashes('Straße ÉCOLE')]).toEqual([...tokenHashes('straße école')])
    expect(tokenHashes('データ分析 と SQL').length).toBe(3)
  })

  it('fmix32 is a bijection on a sample of 2^20 inputs', () => {
    const seen = new Set<number>()
    for (let i = 0; i < 1 << 20; i++) seen.add(fmix32(i * 2654435761))
    expect(seen.size).toBe(1 << 20)
  })
})

describe('MinHash estimate of the Jaccard similarity', () => {
  // Broder (1997): P[min h(A) = min h(B)] = J(A, B); with one permutation hashing and optimal
  // densification (Li, Owen & Zhang 2012; Shrivastava 2017) every position keeps that property, so
  // the fraction of agreeing positions estimates J with standard error about sqrt(J(1 - J) / k).
  // k = 128 with 150-word texts leaves about a third of the bins to densification.
  for (const k of [60, 128]) {
    it(`k = ${k}: within 1/sqrt(k) of the exact Jaccard (computed on word-shingle strings) for >= 90 % of pairs, unbiased`, () => {
      const rand = rng(k)
      const errors: number[] = []
      const z: number[] = []
      for (let p = 0; p < 300; p++) {
        const a = randomText(rand, 150)
        // change a share of the words, from none to most, so J spreads over (0, 1]
        const share = rand() * 0.5
        const b = a.split(' ').map((w) => (rand() < share ? `x${Math.floor(rand() * 1e6)}` : w)).join(' ')
        const exact = stringJaccard(a, b, 4)
        const est = estimateJaccard(minhashSignature(shingleHashes(tokenHashes(a), 4), k), minhashSignature(shingleHashes(tokenHashes(b), 4), k))
        errors.push(est - exact)
        if (exact > 0.02 && exact < 0.98) z.push((est - exact) / Math.sqrt((exact * (1 - exact)) / k))
      }
      const within = errors.filter((e) => Math.abs(e) <= 1 / Math.sqrt(k)).length / errors.length
      expect(within).toBeGreaterThanOrEqual(0.9)
      const bias = errors.reduce((s, e) => s + e, 0) / errors.length
      // mean error: at most 4 standard errors of a mean of 300 errors each of SD <= 0.5/sqrt(k)
      expect(Math.abs(bias)).toBeLessThan((4 * 0.5) / Math.sqrt(k) / Math.sqrt(errors.length))
      // standardised errors have about unit variance if the k hash functions behave independently
      const variance = z.reduce((s, x) => s + x * x, 0) / z.length
      expect(variance).toBeGreaterThan(0.6)
      expect(variance).toBeLessThan(1.5)
    })
  }

  it('texts with fewer shingles than k (most bins densified) are still estimated without bias', () => {
    // Shrivastava (2017), theorem on optimal densification: P[position agrees] = J for every
    // position, filled or borrowed; checked as the mean error over many short pairs
    const k = 60
    const rand = rng(11)
    const errors: number[] = []
    for (let p = 0; p < 600; p++) {
      const a = randomText(rand, 20)
      const b = a.split(' ').map((w) => (rand() < 0.15 ? `s${Math.floor(rand() * 1e6)}` : w)).join(' ')
      const exact = stringJaccard(a, b, 4)
      errors.push(estimateJaccard(minhashSignature(shingleHashes(tokenHashes(a), 4), k), minhashSignature(shingleHashes(tokenHashes(b), 4), k)) - exact)
    }
    const mean = errors.reduce((s, e) => s + e, 0) / errors.length
    const sd = Math.sqrt(errors.reduce((s, e) => s + (e - mean) ** 2, 0) / (errors.length - 1))
    expect(Math.abs(mean)).toBeLessThan((4 * sd) / Math.sqrt(errors.length))
  })

  it('the exact Jaccard of hashed shingles equals the Jaccard of shingle strings', () => {
    const rand = rng(3)
    for (let p = 0; p < 50; p++) {
      const a = randomText(rand, 80)
      const b = a.split(' ').map((w) => (rand() < 0.1 ? 'zz' : w)).join(' ')
      expect(exactJaccard(shingleSet(tokenHashes(a), 4), shingleSet(tokenHashes(b), 4))).toBeCloseTo(stringJaccard(a, b, 4), 12)
    }
  })

  it('signatures survive the trip through bytes', () => {
    const sig = minhashSignature(shingleHashes(tokenHashes('one two three four five six'), 2), 16)
    expect([...signatureFromBytes(signatureToBytes(sig))]).toEqual([...sig])
  })
})

describe('LSH banding', () => {
  it('pairs become candidates at the rate 1-(1-J^r)^b (Leskovec, Rajaraman & Ullman, MMDS section 3.4.2)', () => {
    const k = 60
    const bands = 10
    const rows = k / bands
    const rand = rng(7)
    // pairs near J = 0.55: the steep part of the S-curve for b = 10, r = 6
    let expected = 0
    let observed = 0
    const n = 1500
    for (let p = 0; p < n; p++) {
      const a = randomText(rand, 200)
      const b = a.split(' ').map((w) => (rand() < 0.085 ? `y${Math.floor(rand() * 1e6)}` : w)).join(' ')
      const j = stringJaccard(a, b, 4)
      expected += candidateProbability(j, bands, rows)
      const ka = bandKeys(minhashSignature(shingleHashes(tokenHashes(a), 4), k), bands)
      const kb = bandKeys(minhashSignature(shingleHashes(tokenHashes(b), 4), k), bands)
      if (ka.some((x, i) => x === kb[i])) observed++
    }
    // binomial: observed count within 4 SD of the expected count
    const sd = Math.sqrt(expected * (1 - expected / n))
    expect(Math.abs(observed - expected)).toBeLessThan(4 * sd)
    // the defaults: a repost at J = 0.9 is missed with probability (1 - 0.9^6)^10 ~ 5e-4
    expect(candidateProbability(0.9, 10, 6)).toBeGreaterThan(0.999)
  })

  it('rejects a band count that does not divide the signature', () => {
    expect(() => bandKeys(new Uint32Array(10), 3)).toThrow(/multiple of bands/)
  })
})

describe('text helpers', () => {
  it('HTML to text: scripts and comments dropped, blocks become lines, entities decoded', () => {
    expect(htmlToText('<p>Python &amp; SQL</p><ul><li>Kubernetes</li></ul>')).toBe('Python & SQL\nKubernetes')
    expect(htmlToText('<div>a<script>alert(1)</script>b<!-- c --></div><style>x{}</style>&eacute;&#x41;&nbsp;z')).toBe('a b\néA z')
    expect(cleanText(' a \t b\n\n\n c\u0007 ')).toBe('a b\nc')
  })

  it('finds the first invalid UTF-8 byte (RFC 3629 section 4): overlong forms, surrogates, truncation', () => {
    expect(firstInvalidUtf8(Buffer.from('héllo €𝄞'))).toBe(-1)
    expect(firstInvalidUtf8(Buffer.from([0x61, 0xc0, 0xaf]))).toBe(1) // overlong "/"
    expect(firstInvalidUtf8(Buffer.from([0x61, 0x62, 0xed, 0xa0, 0x80]))).toBe(2) // UTF-16 surrogate
    expect(firstInvalidUtf8(Buffer.from([0xe2, 0x82]))).toBe(0) // cut short
    expect(firstInvalidUtf8(Buffer.from([0xf4, 0x90, 0x80, 0x80]))).toBe(0) // above U+10FFFF
  })
})
