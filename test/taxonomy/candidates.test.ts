import { describe, it, expect } from 'vitest'
import { compareRates } from '../../src/taxonomy/log-likelihood-ratio.ts'
import { normalSurvival } from '../../src/stats/normal-distribution.ts'
import { documentPhrases, findCandidateTerms, type CandidateDoc } from '../../src/taxonomy/candidates.ts'
import { shippedMatcher } from '../../src/taxonomy/index.ts'

/** G² from its textbook definition 2 Σ O ln(O/E) with E from the margins (Wikipedia, "G-test"). */
function gTestByDefinition(table: number[][]): number {
  const n = table.flat().reduce((a, b) => a + b, 0)
  const rows = table.map((r) => r.reduce((a, b) => a + b, 0))
  const cols = table[0]!.map((_, j) => table.reduce((a, r) => a + r[j]!, 0))
  let g = 0
  table.forEach((r, i) => r.forEach((o, j) => { if (o > 0) g += o * Math.log(o / ((rows[i]! * cols[j]!) / n)) }))
  return 2 * g
}

describe('log-likelihood ratio (G²) of two rates', () => {
  it.each([
    [10, 100, 2, 100],
    [0, 50, 7, 80],
    [37, 1200, 12, 5400],
    [5, 5, 0, 9],
  ])('%i/%i vs %i/%i equals the definition 2 Σ O ln(O/E)', (k1, n1, k2, n2) => {
    const expected = gTestByDefinition([[k1, n1 - k1], [k2, n2 - k2]])
    expect(compareRates(k1, n1, k2, n2).g2).toBeCloseTo(expected, 10)
  })

  it('is 0 for equal rates and gives the direction', () => {
    expect(compareRates(5, 50, 10, 100)).toEqual({ g2: 0, pValue: 1, direction: 0 })
    expect(compareRates(1, 50, 10, 100).direction).toBe(-1)
  })

  it('takes p from the chi-square tail with one degree of freedom', () => {
    // χ²(1) upper tail equals the two-sided normal tail at √G² (a different code path: normal
    // distribution instead of the incomplete gamma function)
    for (const [k1, n1, k2, n2] of [[30, 200, 17, 200], [10, 100, 2, 100], [3, 40, 1, 40]] as const) {
      const r = compareRates(k1, n1, k2, n2)
      expect(r.pValue).toBeCloseTo(2 * normalSurvival(Math.sqrt(r.g2)), 10)
    }
    // G² above the 5 % critical value 3.8415 (chi-square tables) gives p below 0.05
    const r = compareRates(30, 200, 17, 200)
    expect(r.g2).toBeGreaterThan(3.8415)
    expect(r.pValue).toBeLessThan(0.05)
  })

  it('agrees with Pearson chi-square on a large table (both tend to the same limit)', () => {
    const [a, b, c, d] = [400, 9600, 300, 9700]
    const n = a + b + c + d
    const pearson = (n * (a * d - b * c) ** 2) / ((a + b) * (c + d) * (a + c) * (b + d))
    expect(compareRates(a, a + b, c, c + d).g2 / pearson).toBeCloseTo(1, 2)
  })

  it('refuses impossible counts', () => {
    expect(() => compareRates(3, 2, 0, 5)).toThrow(RangeError)
    expect(() => compareRates(1, 5, 0, 0)).toThrow(/both periods/)
    expect(() => compareRates(1.5, 5, 0, 5)).toThrow(/whole counts/)
  })
})

describe('candidate terms', () => {
  const { matcher } = shippedMatcher()

  it('proposes phrases no label covers, within one clause, without stop words at the ends', () => {
    const p = [...documentPhrases(matcher, 'We use Quillstream orchestration, Kubernetes and the Brackenfold ledger.').phrases.keys()]
    expect(p).toContain('quillstream orchestration')
    expect(p).toContain('brackenfold ledger')
    expect(p).not.toContain('kubernetes') // a label
    expect(p.some((x) => x.startsWith('the ') || x.endsWith(' and'))).toBe(false)
    expect(p).not.toContain('orchestration kubernetes') // across a comma
  })

  function corpus(): CandidateDoc[] {
    const docs: CandidateDoc[] = []
    const base = ['Python and SQL for reporting at the depot', 'Stakeholder management for the finance office', 'Terraform and Kubernetes in the platform group', 'Forklift licence for the warehouse']
    for (let m = 1; m <= 12; m++) {
      const month = `2025-${String(m).padStart(2, '0')}`
      for (let i = 0; i < 40; i++) {
        let text = `${base[i % 4]}. ${base[(i + m) % 4]}.`
        if (m >= 7 && i < (m - 6) * 4) text += ' Experience with Quillstream orchestration.'
        if (i % 10 === 0) text += ' Knowledge of Brackenfold ledgers.' // steady, never rising
        docs.push({ month, text })
      }
    }
    return docs
  }

  it('ranks a rising phrase first, leaves steady ones out, and gives trends and examples', () => {
    const docs = corpus()
    const r = findCandidateTerms(() => docs, matcher, { recentMonths: 6 })
    expect(r).toMatchObject({ recentFrom: '2025-07', latestMonth: '2025-12', recentDocs: 240, earlierDocs: 240 })
    expect(r.candidates.map((c) => c.term)).toEqual(['quillstream orchestration'])
    const c = r.candidates[0]!
    expect(c).toMatchObject({ recentDf: 84, earlierDf: 0 })
    expect(c.pAdjusted).toBeLessThan(1e-10)
    expect(c.trend.find((t) => t.month === '2025-12')).toEqual({ month: '2025-12', df: 24, docs: 40 })
    expect(c.examples).toHaveLength(3)
    expect(c.examples[0]!.month).toBe('2025-12')
    expect(c.examples[0]!.snippet).toContain('Quillstream orchestration')
  })

  it('needs minimum support and honours exclusions', () => {
    const docs = corpus()
    expect(findCandidateTerms(() => docs, matcher, { minRecentDocs: 100 }).candidates).toEqual([])
    expect(findCandidateTerms(() => docs, matcher, { exclude: new Set(['quillstream orchestration']) }).candidates.map((c) => c.term)).not.toContain('quillstream orchestration')
  })

  it('returns nothing without earlier months to compare with', () => {
    const docs = corpus().filter((d) => d.month >= '2025-10')
    const r = findCandidateTerms(() => docs, matcher, { recentMonths: 6 })
    expect(r.candidates).toEqual([])
    expect(r.earlierDocs).toBe(0)
  })
})
