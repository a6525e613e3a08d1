import { describe, it, expect } from 'vitest'
import { hingeScores, segmentedPoisson } from '../../src/stats/segmented-poisson.ts'
import { poissonGlm } from '../../src/stats/poisson-glm.ts'
import { chiSquareSurvival } from '../../src/stats/chi-square-distribution.ts'
import { seededRandom } from './seeded-random.ts'

const MONTHS = Array.from({ length: 36 }, (_, i) => i)

describe('segmentedPoisson', () => {
  it('recovers an exact broken-stick series: breakpoint, both slopes, zero deviance', () => {
    // counts equal to their expected values (non-integer responses are allowed in the quasi-likelihood)
    const totals = MONTHS.map((m) => 2000 + 10 * m)
    const counts = MONTHS.map((m, i) => totals[i]! * 0.05 * Math.exp(0.004 * m - 0.05 * Math.max(0, m - 24)))
    const result = segmentedPoisson({ times: MONTHS, counts, offset: totals.map(Math.log) })
    expect(result.breakpoint).toBe(24)
    expect(result.slopeBefore.estimate).toBeCloseTo(0.004, 8)
    expect(result.slopeAfter.estimate).toBeCloseTo(0.004 - 0.05, 8)
    expect(result.slopeChange.estimate).toBeCloseTo(-0.05, 8)
    expect(result.deviance).toBeLessThan(1e-8)
    expect(result.linearDeviance).toBeGreaterThan(10)
  })

  it('the fast Newton scan gives the same deviance as a full IRLS fit at every candidate', () => {
    const random = seededRandom(3)
    const totals = MONTHS.map(() => 1500 + Math.floor(random.uniform() * 500))
    const counts = MONTHS.map((m, i) => random.poisson(totals[i]! * 0.03 * Math.exp(m > 20 ? -0.04 * (m - 20) : 0)))
    const offset = totals.map(Math.log)
    const result = segmentedPoisson({ times: MONTHS, counts, offset, exhaustive: true })
    for (const { breakpoint, deviance } of result.profile.filter((_, i) => i % 5 === 0)) {
      const design = new Float64Array(36 * 3)
      MONTHS.forEach((m, i) => {
        design[i] = 1
        design[36 + i] = m
        design[72 + i] = Math.max(0, m - breakpoint)
      })
      const direct = poissonGlm({ design, rows: 36, cols: 3, counts, offset })
      expect(deviance).toBeCloseTo(direct.deviance, 6)
    }
    const minimum = Math.min(...result.profile.map((entry) => entry.deviance!))
    expect(result.deviance).toBeCloseTo(minimum, 6)
    // the correction sits between the single score test at max T² and its Bonferroni bound
    const maxScore = Math.max(...result.profile.map((entry) => entry.score ** 2))
    const single = chiSquareSurvival(maxScore, 1)
    expect(result.pValueAdjusted).toBeGreaterThanOrEqual(single)
    expect(result.pValueAdjusted).toBeLessThanOrEqual(Math.min(1, single * result.candidates) + 1e-15)
  })

  it('screening by score statistics picks the same breakpoint as the exhaustive likelihood search', () => {
    let same = 0
    let closeDeviance = 0
    const replications = 60
    for (let seed = 0; seed < replications; seed++) {
      const random = seededRandom(300 + seed)
      const totals = MONTHS.map(() => 1800 + Math.floor(random.uniform() * 400))
      const breakAt = 10 + (seed % 20)
      const counts = MONTHS.map((m, i) => random.poisson(totals[i]! * 0.05 * Math.exp(-0.03 * Math.max(0, m - breakAt))))
      const offset = totals.map(Math.log)
      const screened = segmentedPoisson({ times: MONTHS, counts, offset })
      const exhaustive = segmentedPoisson({ times: MONTHS, counts, offset, exhaustive: true })
      if (screened.breakpoint === exhaustive.breakpoint) same++
      if (screened.deviance - exhaustive.deviance < 0.5) closeDeviance++
      // same score process, so the same search correction
      expect(screened.pValueAdjusted).toBeCloseTo(exhaustive.pValueAdjusted, 12)
    }
    expect(same / replications).toBeGreaterThan(0.9)
    expect(closeDeviance / replications).toBeGreaterThan(0.97)
  })

  it('finds a steady-then-declining change ten months before the end (simulation, 100 seeds)', () => {
    // demo-like skill: 2,000 postings/month, share 6%, steady for 26 months, then half-life 1.5 years
    const slope = -Math.LN2 / 18
    let nearBreak = 0
    let significant = 0
    let covered = 0
    const replications = 100
    for (let seed = 0; seed < replications; seed++) {
      const random = seededRandom(1000 + seed)
      const totals = MONTHS.map(() => 1800 + Math.floor(random.uniform() * 400))
      const counts = MONTHS.map((m, i) => random.negativeBinomial(totals[i]! * 0.06 * Math.exp(slope * Math.max(0, m - 26)), 200))
      const result = segmentedPoisson({ times: MONTHS, counts, offset: totals.map(Math.log) })
      if (Math.abs(result.breakpoint - 26) <= 3) nearBreak++
      if (result.pValueAdjusted < 0.05) significant++
      if (result.slopeAfter.lower <= slope && slope <= result.slopeAfter.upper) covered++
    }
    // measured on 400 seeds: 81% within ±3 months, 77% significant at 5% (Davies-adjusted), slope
    // interval covers 77% of the time (it ignores the uncertainty of the searched breakpoint)
    expect(nearBreak / replications).toBeGreaterThan(0.7)
    expect(significant / replications).toBeGreaterThan(0.65)
    expect(covered / replications).toBeGreaterThan(0.65)
  })

  it('reports a change on flat series at about the nominal rate once the search is accounted for', () => {
    // Davies' bound: measured 4.5% at the 5% level (0.25% at 1%) on 400 seeds; the unadjusted F test is far higher
    let falseChanges = 0
    let unadjusted = 0
    const replications = 200
    for (let seed = 0; seed < replications; seed++) {
      const random = seededRandom(5000 + seed)
      const totals = MONTHS.map(() => 1800 + Math.floor(random.uniform() * 400))
      const counts = MONTHS.map((_, i) => random.negativeBinomial(totals[i]! * 0.04, 200))
      const result = segmentedPoisson({ times: MONTHS, counts, offset: totals.map(Math.log) })
      if (result.pValueAdjusted < 0.05) falseChanges++
      if (result.pValue < 0.05) unadjusted++
    }
    expect(falseChanges / replications).toBeLessThanOrEqual(0.1)
    expect(unadjusted).toBeGreaterThan(2 * falseChanges)
  })

  it('accepts two series sharing the months (stacked data) and breaks between distinct times', () => {
    // two sources observed in the same months, their level difference carried in the offset
    const times = MONTHS.flatMap((m) => [m, m])
    const offset = MONTHS.flatMap(() => [Math.log(2000), Math.log(300) + Math.log(1.5)])
    const counts = times.map((m, i) => Math.exp(offset[i]! + Math.log(0.05) - 0.04 * Math.max(0, m - 20)))
    const result = segmentedPoisson({ times, counts, offset })
    expect(result.breakpoint).toBe(20)
    expect(result.slopeAfter.estimate).toBeCloseTo(-0.04, 8)
    expect(result.candidates).toBe(36 - 2 * 6 + 1)
  })

  it('hingeScores from a given no-break fit equals the scores segmentedPoisson computes itself', () => {
    const random = seededRandom(8)
    const totals = MONTHS.map(() => 2000)
    const counts = MONTHS.map((m) => random.poisson(100 * Math.exp(-0.03 * Math.max(0, m - 24))))
    const offset = totals.map(Math.log)
    const full = segmentedPoisson({ times: MONTHS, counts, offset })
    const design = new Float64Array(72)
    MONTHS.forEach((m, i) => {
      design[i] = 1
      design[36 + i] = m
    })
    const linear = poissonGlm({ design, rows: 36, cols: 2, counts, offset })
    const scores = hingeScores({ times: MONTHS, counts, fitted: linear.fitted, dispersion: linear.dispersion })
    expect(scores.pValueAdjusted).toBeCloseTo(full.pValueAdjusted, 8)
    scores.profile.forEach((entry, k) => expect(entry.score).toBeCloseTo(full.profile[k]!.score, 8))
  })

  it('respects minSegment and earliestBreak', () => {
    const counts = MONTHS.map((m) => 50 + m)
    const result = segmentedPoisson({ times: MONTHS, counts, minSegment: 8, earliestBreak: 20 })
    expect(result.profile[0]!.breakpoint).toBe(20)
    expect(result.profile[result.profile.length - 1]!.breakpoint).toBe(27)
    expect(result.candidates).toBe(8)
  })

  it('rejects short or unordered series', () => {
    expect(() => segmentedPoisson({ times: [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10], counts: new Array(11).fill(3) })).toThrow(/at least 12 distinct times/)
    const times = [...MONTHS]
    times[5] = 3
    expect(() => segmentedPoisson({ times, counts: new Array(36).fill(3) })).toThrow(/non-decreasing times, position 5/)
    expect(() => segmentedPoisson({ times: MONTHS, counts: [1, 2] })).toThrow(/one count per time/)
    expect(() => segmentedPoisson({ times: MONTHS, counts: new Array(36).fill(3), earliestBreak: 100 })).toThrow(/no admissible breakpoint/)
  })
})
