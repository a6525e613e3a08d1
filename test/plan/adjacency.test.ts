import { describe, it, expect } from 'vitest'
import fc from 'fast-check'
import { cosine, countCoOccurrence, nearest, pmi, ppmi, support } from '../../src/plan/adjacency.ts'

/*
 * Hand-computed co-occurrence table (worked by hand, no software):
 *
 *   doc  skills          N = 8 documents (d8 mentions no skill but still counts)
 *   d1   A B             n_A = 4 (d1 d2 d3 d4)   n_B = 4 (d1 d2 d3 d5)   n_C = 4 (d3 d5 d6 d7)
 *   d2   A B             n_AB = 3 (d1 d2 d3)     n_AC = 1 (d3)           n_BC = 2 (d3 d5)
 *   d3   A B C
 *   d4   A               PMI(A,B) = log2(n_AB·N/(n_A·n_B)) = log2(3·8/16) = log2(1.5) = 0.5849625
 *   d5   B C             PMI(A,C) = log2(1·8/16) = log2(0.5) = -1   -> PPMI 0 (less often than chance)
 *   d6   C               PMI(B,C) = log2(2·8/16) = log2(1)   =  0   -> PPMI 0 (exactly chance)
 *   d7   C
 *   d8   (none)
 *
 * Cosine of co-occurrence vectors (v_x[c] = n_xc, c ≠ x): v_A = (B:3, C:1), v_B = (A:3, C:2), v_C = (A:1, B:2)
 *   cos(A,B) = v_A[C]·v_B[C] / (|v_A|·|v_B|) = 1·2 / (√10·√13) = 2/√130 = 0.1754116
 *   cos(A,C) = v_A[B]·v_C[B] / (|v_A|·|v_C|) = 3·2 / (√10·√5)  = 6/√50  = 0.8485281
 */
const DOCS = [['A', 'B'], ['A', 'B'], ['A', 'B', 'C'], ['A'], ['B', 'C'], ['C'], ['C'], []]

describe('co-occurrence counts', () => {
  const co = countCoOccurrence(DOCS)
  it('counts documents, singles and pairs', () => {
    expect(co.documents).toBe(8)
    expect(co.counts.get('A')).toBe(4)
    expect(co.counts.get('B')).toBe(4)
    expect(co.counts.get('C')).toBe(4)
    expect(support(co, 'A', 'B')).toBe(3)
    expect(support(co, 'B', 'A')).toBe(3)
    expect(support(co, 'A', 'C')).toBe(1)
    expect(support(co, 'B', 'C')).toBe(2)
    expect(support(co, 'A', 'Z')).toBe(0)
  })
  it('a skill repeated within a document counts once', () => {
    const c = countCoOccurrence([['A', 'A', 'B']])
    expect(c.counts.get('A')).toBe(1)
    expect(support(c, 'A', 'B')).toBe(1)
  })
})

describe('PMI and PPMI on the hand-computed table', () => {
  const co = countCoOccurrence(DOCS)
  it('matches the hand computation', () => {
    expect(pmi(co, 'A', 'B')).toBeCloseTo(0.5849625, 7)
    expect(pmi(co, 'A', 'C')).toBeCloseTo(-1, 12)
    expect(pmi(co, 'B', 'C')).toBeCloseTo(0, 12)
    expect(ppmi(co, 'A', 'B', 1)).toBeCloseTo(0.5849625, 7)
    expect(ppmi(co, 'A', 'C', 1)).toBe(0)
    expect(ppmi(co, 'B', 'C', 1)).toBe(0)
  })
  it('is symmetric and undefined for unseen pairs', () => {
    expect(pmi(co, 'B', 'A')).toBe(pmi(co, 'A', 'B'))
    expect(pmi(co, 'A', 'Z')).toBeNull()
  })
  it('minimum support: n_AB = 3 passes a support of 3, not of 4', () => {
    expect(ppmi(co, 'A', 'B', 3)).toBeCloseTo(0.5849625, 7)
    expect(ppmi(co, 'A', 'B', 4)).toBe(0)
  })
  it('cosine matches the hand computation', () => {
    expect(cosine(co, 'A', 'B', 1)).toBeCloseTo(0.1754116, 7)
    expect(cosine(co, 'A', 'C', 1)).toBeCloseTo(0.8485281, 7)
    expect(cosine(co, 'A', 'C', 2)).toBe(0) // n_AC = 1 below the support
  })
  it('nearest lists positive scores, best first, at most topK', () => {
    expect(nearest(co, 'A', ['B', 'C'], { method: 'ppmi', minSupport: 1, topK: 5 }).map((n) => n.id)).toEqual(['B'])
    expect(nearest(co, 'A', ['B', 'C'], { method: 'cosine', minSupport: 1, topK: 5 }).map((n) => n.id)).toEqual(['C', 'B'])
    expect(nearest(co, 'A', ['B', 'C'], { method: 'cosine', minSupport: 1, topK: 1 }).map((n) => n.id)).toEqual(['C'])
    expect(nearest(co, 'A', ['A'], { method: 'ppmi', minSupport: 1, topK: 5 })).toEqual([])
  })
})

describe('against a dense brute-force implementation', () => {
  // written here independently: a documents × skills 0/1 matrix and the PMI definition on it
  function densePmi(docs: string[][], a: string, b: string): number | null {
    const has = (d: string[], s: string) => d.includes(s)
    const n = docs.length
    const na = docs.filter((d) => has(d, a)).length
    const nb = docs.filter((d) => has(d, b)).length
    const nab = docs.filter((d) => has(d, a) && has(d, b)).length
    if (nab === 0) return null
    return Math.log((nab / n) / ((na / n) * (nb / n))) / Math.LN2
  }
  it('agrees on random corpora', () => {
    const skill = fc.constantFrom('a', 'b', 'c', 'd', 'e')
    fc.assert(
      fc.property(fc.array(fc.uniqueArray(skill, { maxLength: 5 }), { minLength: 1, maxLength: 40 }), skill, skill, (docs, a, b) => {
        fc.pre(a !== b)
        const co = countCoOccurrence(docs)
        const got = pmi(co, a, b)
        const want = densePmi(docs, a, b)
        return want === null ? got === null : got !== null && Math.abs(got - want) < 1e-12
      }),
    )
  })
})

describe('co-occurrence counted for a focus set', () => {
  const skill = fc.constantFrom('a', 'b', 'c', 'd', 'e', 'f')
  it('gives the same support, PMI and cosine as the full count within the focus set (PMI also from focus-only lists), and refuses outside it', () => {
    fc.assert(
      fc.property(
        fc.array(fc.uniqueArray(skill, { maxLength: 6 }), { minLength: 1, maxLength: 40 }),
        fc.uniqueArray(skill, { minLength: 1, maxLength: 4 }),
        (docs, focusList) => {
          const focus = new Set<string>(focusList)
          const full = countCoOccurrence(docs)
          const focused = countCoOccurrence(docs, focus)
          const onlyFocus = countCoOccurrence(docs.map((d) => d.filter((x) => focus.has(x))), focus)
          expect(focused.counts).toEqual(full.counts)
          expect(focused.documents).toBe(full.documents)
          for (const a of 'abcdef') {
            for (const b of 'abcdef') {
              if (a === b) continue
              if (focus.has(a) && focus.has(b)) {
                expect(support(focused, a, b)).toBe(support(full, a, b))
                expect(pmi(focused, a, b)).toBe(pmi(full, a, b))
                expect(cosine(focused, a, b, 1)).toBeCloseTo(cosine(full, a, b, 1), 12)
                // PMI from documents that list their focus skills alone, as the plan reads them
                expect(pmi(onlyFocus, a, b)).toBe(pmi(full, a, b))
                expect(support(onlyFocus, a, b)).toBe(support(full, a, b))
              } else {
                expect(() => support(focused, a, b)).toThrow(/not counted/)
                expect(() => cosine(focused, a, b, 1)).toThrow(RangeError)
              }
            }
          }
        },
      ),
      { seed: 20261202, numRuns: 200 },
    )
  })
})
