/**
 * The generated postings carry the planted shapes: the monthly share of each planted skill, fitted
 * as a log-linear trend, gives back the planted half-life or growth rate; steady skills stay flat;
 * emerging skills are near zero before their start; hiring volume is seasonal; about 5% are reposts.
 */
import { describe, expect, it } from 'vitest'
import { HIRING_SEASON, demoMonths } from '../../src/demo/calendar.ts'
import { PLANTED_SKILLS, type PlantedSkill } from '../../src/demo/planted.ts'
import { generatePostings, type PostingTruth } from '../../src/demo/postings.ts'
import { renderPlain } from '../../src/demo/text.ts'
import { INVENTED_TERMS } from '../../src/demo/skills.ts'

/**
 * Weighted least squares of log(share) on month, weights = counts (the inverse variance of a log
 * Poisson count); returns the slope per month and its standard error.
 */
function logLinear(counts: readonly number[], totals: readonly number[], from = 0, to = counts.length): { slope: number; se: number } {
  let sw = 0
  let st = 0
  let sy = 0
  for (let t = from; t < to; t++) {
    const w = counts[t]!
    if (w <= 0) continue
    sw += w
    st += w * t
    sy += w * Math.log(counts[t]! / totals[t]!)
  }
  const tBar = st / sw
  const yBar = sy / sw
  let sxx = 0
  let sxy = 0
  for (let t = from; t < to; t++) {
    const w = counts[t]!
    if (w <= 0) continue
    sxx += w * (t - tBar) ** 2
    sxy += w * (t - tBar) * (Math.log(counts[t]! / totals[t]!) - yBar)
  }
  return { slope: sxy / sxx, se: Math.sqrt(1 / sxx) }
}

const MONTHS = 36
const months = demoMonths('2025-06-15', MONTHS)
/** originals whose text names Hadoop, counted from the text itself to check the recorded truth */
const textHadoop = new Array<number>(MONTHS).fill(0)
const truth: PostingTruth = generatePostings({ seed: 3, months, perMonth: 1500 }, (p) => {
  if (p.repostOf === null && /\b(Hadoop|HDFS)\b/.test(renderPlain(p.parts))) textHadoop[p.month]!++
})
const totals = truth.postings
const planted = (kind: PlantedSkill['shape']['kind']) => PLANTED_SKILLS.filter((p) => p.shape.kind === kind)

describe('log-linear fit used by these tests', () => {
  it('recovers an exact half-life (CHECKS.md 7c: y = 100 * 2^(-t/6), t = 0..12 gives 6.000000)', () => {
    const counts = Array.from({ length: 13 }, (_x, t) => 100 * Math.pow(2, -t / 6))
    const { slope } = logLinear(counts, new Array<number>(13).fill(1))
    expect(Math.log(2) / -slope).toBeCloseTo(6, 9)
  })
})

describe('planted shapes in the generated postings', () => {
  it('records truth that matches the text', () => {
    expect(textHadoop).toEqual(truth.mentions['hadoop'])
  })

  it('declining skills: fitted half-life matches the planted one', () => {
    for (const p of planted('declining')) {
      if (p.shape.kind !== 'declining') continue
      const { slope, se } = logLinear(truth.mentions[p.id]!, totals)
      const plantedSlope = -Math.log(2) / (12 * p.shape.halfLifeYears)
      const halfLifeYears = Math.log(2) / -slope / 12
      expect(Math.abs(slope - plantedSlope), `${p.id}: slope ${slope} vs ${plantedSlope} (se ${se})`).toBeLessThan(3 * se)
      // where three years of data pin the slope down (half-lives up to three years), within 25%
      if (p.shape.halfLifeYears <= 3) expect(Math.abs(halfLifeYears / p.shape.halfLifeYears - 1), p.id).toBeLessThan(0.25)
    }
  })

  it('fading skills fall fast and end rare', () => {
    for (const p of planted('fading')) {
      if (p.shape.kind !== 'fading') continue
      const counts = truth.mentions[p.id]!
      const { slope, se } = logLinear(counts, totals)
      expect(Math.abs(slope + Math.log(2) / (12 * p.shape.halfLifeYears)), p.id).toBeLessThan(3 * se)
      const firstYear = counts.slice(0, 12).reduce((a, b) => a + b, 0)
      const lastYear = counts.slice(24).reduce((a, b) => a + b, 0)
      // half-lives of at most 1.5 years leave at most 2^(-24/18) = 0.40 of the first year in the last
      expect(lastYear, p.id).toBeLessThan(firstYear / 2)
    }
  })

  it('rising skills grow at the planted annual rate', () => {
    for (const p of planted('rising')) {
      if (p.shape.kind !== 'rising') continue
      const { slope, se } = logLinear(truth.mentions[p.id]!, totals)
      const plantedSlope = Math.log(1 + p.shape.annualGrowth) / 12
      expect(Math.abs(slope - plantedSlope), `${p.id}: ${slope} vs ${plantedSlope} (se ${se})`).toBeLessThan(3 * se)
      if (p.baseShare >= 0.05) expect(Math.abs(Math.expm1(12 * slope) / p.shape.annualGrowth - 1), p.id).toBeLessThan(0.25)
    }
  })

  it('emerging skills are near zero before they start, then grow at the planted rate', () => {
    for (const p of [...planted('emerging'), ...INVENTED_TERMS.map((t) => ({ id: t.id, baseShare: t.baseShare, shape: t.shape }))]) {
      if (p.shape.kind !== 'emerging') continue
      const counts = truth.mentions[p.id]!
      const start = p.shape.startMonth
      const before = counts.slice(0, start).reduce((a, b) => a + b, 0) / totals.slice(0, start).reduce((a, b) => a + b, 0)
      expect(before, p.id).toBeLessThan(p.baseShare * 0.1)
      const { slope, se } = logLinear(counts, totals, start)
      expect(Math.abs(slope - Math.log(1 + p.shape.annualGrowth) / 12), p.id).toBeLessThan(3 * se)
      expect(counts[MONTHS - 1]! / totals[MONTHS - 1]!, p.id).toBeGreaterThan(p.baseShare)
    }
  })

  it('steady skills stay flat', () => {
    for (const p of planted('steady')) {
      const { slope, se } = logLinear(truth.mentions[p.id]!, totals)
      expect(Math.abs(slope), `${p.id}: slope ${slope} (se ${se})`).toBeLessThan(3 * se)
      const share = truth.mentions[p.id]!.reduce((a, b) => a + b, 0) / totals.reduce((a, b) => a + b, 0)
      expect(Math.abs(share / p.baseShare - 1), p.id).toBeLessThan(0.1)
    }
  })

  it('change-point skills are flat before the break and decline after it', () => {
    for (const p of planted('change')) {
      if (p.shape.kind !== 'change') continue
      const counts = truth.mentions[p.id]!
      const before = logLinear(counts, totals, 0, p.shape.breakMonth)
      expect(Math.abs(before.slope), p.id).toBeLessThan(3 * before.se)
      const after = logLinear(counts, totals, p.shape.breakMonth)
      expect(Math.abs(after.slope + Math.log(2) / (12 * p.shape.halfLifeYears)), p.id).toBeLessThan(3 * after.se)
    }
  })

  it('hiring volume follows the seasonal pattern and about 5% are reposts', () => {
    const mean = totals.reduce((a, b) => a + b, 0) / MONTHS
    for (const m of months) {
      const expected = 1500 * HIRING_SEASON[m.month - 1]! * (1 + (0.04 * (m.index - (MONTHS - 1) / 2)) / 12)
      expect(Math.abs(totals[m.index]! / expected - 1), m.key).toBeLessThan(0.12)
    }
    const december = months.filter((m) => m.month === 12).map((m) => totals[m.index]!)
    for (const d of december) expect(d).toBeLessThan(0.85 * mean)
    const reposts = truth.reposts.reduce((a, b) => a + b, 0) / totals.reduce((a, b) => a + b, 0)
    expect(reposts).toBeGreaterThan(0.04)
    expect(reposts).toBeLessThan(0.06)
  })
})
