import { describe, it, expect } from 'vitest'
import { TheilSenRegression } from 'ml-regression-theil-sen'
import { theilSen } from '../../src/stats/theil-sen.ts'
import { seededRandom } from './seeded-random.ts'

// Convention under test: Gilbert (1987) interpolated ranks M1 = (N′ − C)/2 and M2 + 1 = (N′ + C)/2 + 1.
describe('theilSen', () => {
  it('Sen (1968) worked example: slope 4, 93% interval with Gilbert ranks [3.7310, 4.2846]', () => {
    // Data: Sen (1968) JASA 63, reproduced in scipy's TestTheilslopes "example in Sen (1968)" [S];
    // slope 4 [S]; interval with Gilbert's interpolated ranks [3.7310, 4.2846] [C] (CHECKS.md §3a).
    // (scipy's rounded ranks 4 and 18 would give [3.71, 4.38]; we do not use that convention.)
    const result = theilSen([1, 2, 3, 4, 10, 12, 18], [9, 15, 19, 20, 45, 55, 78], { level: 0.93 })
    expect(result.slope).toBe(4)
    expect(result.intercept).toBe(4) // Conover: median(y) − 4 · median(x) = 20 − 16
    expect(result.pairCount).toBe(21)
    expect(result.lower).toBeCloseTo(3.731, 3)
    expect(result.upper).toBeCloseTo(4.2846, 4)
  })

  it('USEPA 2009 Example 17-7: slope 1.333333, intercept −65.96667, 95% CI [0.3992083, 2.3333333]', () => {
    // EnvStats kendallTrendTest on the USEPA sodium example (CHECKS.md §3b [S + C]):
    // N′ = 45, C = 21.913, M1 = 11.543, M2 = 33.457
    const year = [89.6, 90.1, 90.8, 91.1, 92.1, 93.1, 94.1, 95.6, 96.1, 96.3]
    const sodium = [56, 53, 51, 55, 52, 60, 62, 59, 61, 63]
    const result = theilSen(year, sodium)
    expect(result.slope).toBeCloseTo(1.333333, 6)
    expect(result.intercept).toBeCloseTo(-65.96667, 5)
    expect(result.pairCount).toBe(45)
    expect(result.lowerRank).toBeCloseTo(11.543, 3)
    expect(result.upperRank - 1).toBeCloseTo(33.457, 3)
    expect(result.lower).toBeCloseTo(0.3992083, 6)
    expect(result.upper).toBeCloseTo(2.3333333, 6)
  })

  it('USEPA 2009 Example 17-6 (ties in y): slope 26.66667, intercept −1909.333, 95% CI [20, 35.71182]', () => {
    // EnvStats on the USEPA sulfate example (CHECKS.md §3c [S + C]), N′ = 253
    const date = [
      89.6, 89.8, 90.1, 90.3, 90.6, 90.8, 91.1, 91.3, 91.6, 91.8, 92.1, 92.6, 93.1, 93.6, 94.1, 94.6, 95.1, 95.6, 95.8,
      96.1, 96.3, 96.6, 96.8,
    ]
    const sulfate = [480, 450, 490, 520, 485, 510, 510, 530, 510, 560, 560, 540, 590, 550, 600, 700, 570, 610, 650, 620, 830, 720, 590]
    const result = theilSen(date, sulfate)
    expect(result.pairCount).toBe(253)
    expect(result.slope).toBeCloseTo(26.66667, 4)
    expect(result.intercept).toBeCloseTo(-1909.333, 2)
    expect(result.lower).toBeCloseTo(20, 5)
    expect(result.upper).toBeCloseTo(35.71182, 4)
  })

  it('agrees with the independent ml-regression-theil-sen implementation on the slope', () => {
    // The package takes the median by quickselect, which returns the lower middle value when the
    // number of pairwise slopes is even; we average the two middle values. Odd counts must agree
    // exactly; even counts must bracket as described.
    const random = seededRandom(7)
    let oddCases = 0
    for (let trial = 0; trial < 60; trial++) {
      const n = 5 + Math.floor(random.uniform() * 40)
      const x = Array.from({ length: n }, (_, i) => (trial % 3 === 0 ? Math.floor(i / 2) : i))
      // integer values produce plenty of tied y values; a few outliers test robustness
      const y = x.map((value) => Math.round(2 - 0.3 * value + 3 * random.normal() + (random.uniform() < 0.1 ? 40 : 0)))
      const ours = theilSen(x, y)
      const reference = new TheilSenRegression(x, y)
      // the package's intercept is the lower median of y − slope·x (its own slope), not Conover's
      const residuals = x.map((value, i) => y[i]! - reference.slope * value).sort((a, b) => a - b)
      expect(reference.intercept).toBeCloseTo(residuals[(residuals.length - 1) >> 1]!, 10)
      if (ours.pairCount % 2 === 1) {
        oddCases++
        expect(ours.slope).toBeCloseTo(reference.slope, 12)
      } else {
        const pairwise: number[] = []
        for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) if (x[j] !== x[i]) pairwise.push((y[j]! - y[i]!) / (x[j]! - x[i]!))
        pairwise.sort((a, b) => a - b)
        const half = pairwise.length / 2
        expect(reference.slope).toBeCloseTo(pairwise[half - 1]!, 12)
        expect(ours.slope).toBeCloseTo((pairwise[half - 1]! + pairwise[half]!) / 2, 12)
      }
    }
    expect(oddCases).toBeGreaterThan(10)
  })

  it('selects the same order statistics as a full sort (Gilbert interpolated ranks), with ties, gaps and short series', () => {
    // reference: every pairwise slope sorted, the bounds read at Gilbert's fractional 1-based ranks
    // M1 = (N′ − C)/2 and M2 + 1 = (N′ + C)/2 + 1 and interpolated (Gilbert 1987 §16.5); the result's
    // own ranks are used so that only the selection is under test
    const random = seededRandom(77)
    for (let trial = 0; trial < 300; trial++) {
      const n = 3 + Math.floor(random.uniform() * 70)
      // tied times (two values a month) every fifth trial, skipped months every third
      const x = Array.from({ length: n }, (_, i) => (trial % 5 === 0 ? Math.floor(i / 2) : trial % 3 === 0 ? i + Math.floor(i / 4) : i))
      const y = x.map((t) => (trial % 4 === 0 ? Math.round(random.uniform() * 3) : 0.02 * t + random.normal()))
      const ours = theilSen(x, y, { level: [0.8, 0.9, 0.95, 0.99][trial % 4]! })
      const sorted: number[] = []
      for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) if (x[j] !== x[i]) sorted.push((y[j]! - y[i]!) / (x[j]! - x[i]!))
      sorted.sort((a, b) => a - b)
      const count = sorted.length
      expect(ours.pairCount).toBe(count)
      const median = count % 2 === 1 ? sorted[count >> 1]! : (sorted[count / 2 - 1]! + sorted[count / 2]!) / 2
      expect(ours.slope).toBe(median)
      const at = (rank: number): number => {
        if (rank < 1) return -Infinity
        if (rank > count) return Infinity
        const below = Math.floor(rank)
        const low = sorted[below - 1]!
        return rank === below || below >= count ? low : low + (rank - below) * (sorted[below]! - low)
      }
      expect(ours.lower).toBe(at(ours.lowerRank))
      expect(ours.upper).toBe(at(ours.upperRank))
    }
  })

  it('widens the interval as the level rises and marks unreachable ranks as infinite', () => {
    const x = [1, 2, 3, 4, 5, 6, 7, 8, 9, 10]
    const y = [1, 3, 2, 5, 4, 7, 6, 9, 8, 11]
    const narrow = theilSen(x, y, { level: 0.8 })
    const wide = theilSen(x, y, { level: 0.99 })
    expect(wide.lower).toBeLessThanOrEqual(narrow.lower)
    expect(wide.upper).toBeGreaterThanOrEqual(narrow.upper)
    const tiny = theilSen([1, 2, 3], [1, 2, 4])
    expect(tiny.lower).toBe(-Infinity)
    expect(tiny.upper).toBe(Infinity)
  })

  it('rejects input without two distinct x values or with mismatched lengths', () => {
    expect(() => theilSen([1, 1, 1], [1, 2, 3])).toThrow(/two distinct x values/)
    expect(() => theilSen([1, 2], [1])).toThrow(/equal lengths/)
    expect(() => theilSen([1, 2, 3], [1, 2, 3], { level: 1 })).toThrow(/level/)
  })
})
