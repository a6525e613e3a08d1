/**
 * The generated postings carry the planted shapes: the monthly share of each planted skill, fitted
 * as a log-linear trend, gives back the planted half-life or growth rate; steady skills stay flat;
 * emerging skills are near zero before their start; hiring volume is seasonal; about 5% are reposts.
 */
import { describe, expect, it } from 'vitest'
import { HIRING_SEASON, demoMonths } from '../../src/demo/calendar.ts'
import { PLANTED_SKILLS, type PlantedSkill } from '../../src/demo/planted.ts'
import { ROLES } from '../../src/demo/org.ts'
import { generatePostings, probabilityTable, type PostingTruth } from '../../src/demo/postings.ts'
import { renderPlain } from '../../src/demo/text.ts'
import { INVENTED_TERMS, demoSkills, shareAt } from '../../src/demo/skills.ts'

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

/**
 * Tolerance in standard errors for the slope checks: about forty of them run here, so at three
 * standard errors one seed in ten would fail one by chance; at four, about one in four hundred.
 */
const K_SE = 4

/**
 * True when a fitted slope is precise enough for a 25% half-life check: a half-life within 25% means a
 * slope within -20%..+33% of the planted one, so K_SE standard errors must fit inside 20%.
 */
function precise(se: number, plantedSlope: number): boolean {
  return K_SE * se <= 0.2 * Math.abs(plantedSlope)
}

const MONTHS = 36
const months = demoMonths('2025-06-15', MONTHS)
/** a large sample of the skill draws (no text), so that fitted slopes are precise */
const BIG = 24_000
const truth: PostingTruth = generatePostings({ seed: 3, months, perMonth: BIG, countsOnly: true }, () => {})
const totals = truth.postings
/** originals whose text names Hadoop, counted from the text of a full run to check its recorded truth */
const textHadoop = new Array<number>(MONTHS).fill(0)
const full: PostingTruth = generatePostings({ seed: 3, months, perMonth: 600 }, (p) => {
  if (p.repostOf === null && /\b(Hadoop|HDFS)\b/.test(renderPlain(p.parts))) textHadoop[p.month]!++
})
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
    expect(textHadoop).toEqual(full.mentions['hadoop'])
  })

  it('plants expected shares equal to the planted curves in every month (no capping, no leakage)', () => {
    const skills = demoSkills()
    const total = ROLES.reduce((a, r) => a + r.marketShare, 0)
    for (const m of months) {
      const p = probabilityTable(skills, m.index, MONTHS)
      skills.forEach((s, k) => {
        const expected = ROLES.reduce((a, r, i) => a + (r.marketShare / total) * p[i * skills.length + k]!, 0)
        expect(expected, `${s.id} ${m.key}`).toBeCloseTo(shareAt(s.shape, s.baseShare, m.index, MONTHS), 12)
      })
    }
  })

  it('declining skills: fitted half-life matches the planted one', () => {
    let checked = 0
    for (const p of planted('declining')) {
      if (p.shape.kind !== 'declining') continue
      const { slope, se } = logLinear(truth.mentions[p.id]!, totals)
      const plantedSlope = -Math.log(2) / (12 * p.shape.halfLifeYears)
      const halfLifeYears = Math.log(2) / -slope / 12
      expect(Math.abs(slope - plantedSlope), `${p.id}: slope ${slope} vs ${plantedSlope} (se ${se})`).toBeLessThan(K_SE * se)
      // within 25% wherever the sample pins the slope down that far
      if (precise(se, plantedSlope)) expect(Math.abs(halfLifeYears / p.shape.halfLifeYears - 1), p.id).toBeLessThan(0.25)
      checked += precise(se, plantedSlope) ? 1 : 0
    }
    // half-lives of two to five years are pinned down by this sample
    expect(checked).toBeGreaterThanOrEqual(5)
  })

  it('fading skills fall fast and end rare', () => {
    for (const p of planted('fading')) {
      if (p.shape.kind !== 'fading') continue
      const counts = truth.mentions[p.id]!
      const { slope, se } = logLinear(counts, totals)
      const plantedSlope = -Math.log(2) / (12 * p.shape.halfLifeYears)
      expect(Math.abs(slope - plantedSlope), p.id).toBeLessThan(K_SE * se)
      if (precise(se, plantedSlope)) expect(Math.abs(plantedSlope / slope - 1), p.id).toBeLessThan(0.25)
      // the last year's share is well under half the starting share (about 0.3 of it for a 1.5-year half-life)
      const lastYear = counts.slice(24).reduce((a, b) => a + b, 0) / totals.slice(24).reduce((a, b) => a + b, 0)
      expect(lastYear, p.id).toBeLessThan(p.baseShare / 2)
    }
  })

  it('rising skills grow at the planted annual rate', () => {
    for (const p of planted('rising')) {
      if (p.shape.kind !== 'rising') continue
      const { slope, se } = logLinear(truth.mentions[p.id]!, totals)
      const plantedSlope = Math.log(1 + p.shape.annualGrowth) / 12
      expect(Math.abs(slope - plantedSlope), `${p.id}: ${slope} vs ${plantedSlope} (se ${se})`).toBeLessThan(K_SE * se)
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
      expect(Math.abs(slope - Math.log(1 + p.shape.annualGrowth) / 12), p.id).toBeLessThan(K_SE * se)
      expect(counts[MONTHS - 1]! / totals[MONTHS - 1]!, p.id).toBeGreaterThan(p.baseShare)
    }
  })

  it('steady skills stay flat', () => {
    for (const p of planted('steady')) {
      const { slope, se } = logLinear(truth.mentions[p.id]!, totals)
      expect(Math.abs(slope), `${p.id}: slope ${slope} (se ${se})`).toBeLessThan(K_SE * se)
      const share = truth.mentions[p.id]!.reduce((a, b) => a + b, 0) / totals.reduce((a, b) => a + b, 0)
      expect(Math.abs(share / p.baseShare - 1), p.id).toBeLessThan(0.1)
    }
  })

  it('change-point skills are flat before the break and decline after it', () => {
    for (const p of planted('change')) {
      if (p.shape.kind !== 'change') continue
      const counts = truth.mentions[p.id]!
      const before = logLinear(counts, totals, 0, p.shape.breakMonth)
      expect(Math.abs(before.slope), p.id).toBeLessThan(K_SE * before.se)
      const after = logLinear(counts, totals, p.shape.breakMonth)
      expect(Math.abs(after.slope + Math.log(2) / (12 * p.shape.halfLifeYears)), p.id).toBeLessThan(K_SE * after.se)
    }
  })

  it('hiring volume follows the seasonal pattern and about 5% are reposts', () => {
    const mean = totals.reduce((a, b) => a + b, 0) / MONTHS
    for (const m of months) {
      const expected = BIG * HIRING_SEASON[m.month - 1]! * (1 + (0.04 * (m.index - (MONTHS - 1) / 2)) / 12)
      expect(Math.abs(totals[m.index]! / expected - 1), m.key).toBeLessThan(0.12)
    }
    const december = months.filter((m) => m.month === 12).map((m) => totals[m.index]!)
    for (const d of december) expect(d).toBeLessThan(0.85 * mean)
    const reposts = full.reposts.reduce((a, b) => a + b, 0) / full.postings.reduce((a, b) => a + b, 0)
    expect(reposts).toBeGreaterThan(0.04)
    expect(reposts).toBeLessThan(0.06)
  })
})
