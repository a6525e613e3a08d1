import { describe, it, expect } from 'vitest'
import * as jscat from '@bdelab/jscat'
import { makeItem, probability, type ItemParams } from '../../src/ability/response-function.ts'
import { itemInformation, testInformation } from '../../src/ability/information.ts'
import { estimateMle, logLikelihood } from '../../src/ability/mle.ts'
import { estimateEap, eapBatch } from '../../src/ability/eap.ts'
import { estimateAbility, estimateAbilities, fallbackNote } from '../../src/ability/estimate.ts'
import { fromDense } from '../../src/ability/response-data.ts'
import { mulberry32, normalDraw, type Random } from '../../src/ability/simulate.ts'

// Baker's three-item example: CHECKS.md 1a, inputs verified in birtr R/ability.R (Baker & Kim 2017) [S]
const BAKER_ITEMS: ItemParams[] = [
  { a: 1.0, b: -1.0, c: 0 },
  { a: 1.2, b: 0.0, c: 0 },
  { a: 0.8, b: 1.0, c: 0 },
]
const BAKER_PATTERN = [1, 0, 1]

/** Brute-force posterior mean and SD by the midpoint rule on 40,000 cells over ±10 prior SD (independent of src/). */
function bruteForceEap(items: ItemParams[], pattern: number[], D: number, mean: number, sd: number) {
  const cells = 40000
  const lower = mean - 10 * sd
  const width = (20 * sd) / cells
  let total = 0
  let first = 0
  let second = 0
  for (let i = 0; i < cells; i++) {
    const x = lower + (i + 0.5) * width
    let like = Math.exp(-0.5 * ((x - mean) / sd) ** 2)
    items.forEach((item, j) => {
      const p = item.c + (1 - item.c) / (1 + Math.exp(-D * item.a * (x - item.b)))
      like *= pattern[j] === 1 ? p : 1 - p
    })
    total += like
    first += like * x
    second += like * x * x
  }
  const m = first / total
  return { theta: m, se: Math.sqrt(second / total - m * m) }
}

/** Brute-force MLE by a dense grid then golden-section search of the log-likelihood (independent of src/). */
function bruteForceMle(items: ItemParams[], pattern: number[], D: number): number {
  const ll = (x: number) =>
    items.reduce((s, item, j) => {
      const p = item.c + (1 - item.c) / (1 + Math.exp(-D * item.a * (x - item.b)))
      return s + Math.log(pattern[j] === 1 ? p : 1 - p)
    }, 0)
  let best = -8
  for (let x = -8; x <= 8; x += 0.01) if (ll(x) > ll(best)) best = x
  let lo = best - 0.01
  let hi = best + 0.01
  const g = (Math.sqrt(5) - 1) / 2
  for (let i = 0; i < 100; i++) {
    const x1 = hi - g * (hi - lo)
    const x2 = lo + g * (hi - lo)
    if (ll(x1) < ll(x2)) lo = x1
    else hi = x2
  }
  return (lo + hi) / 2
}

function randomItems(rng: Random, n: number, model: '2pl' | '3pl'): ItemParams[] {
  return Array.from({ length: n }, () =>
    makeItem(model, { a: 0.5 + 1.5 * rng(), b: 2 * normalDraw(rng) * 0.8, c: model === '3pl' ? 0.25 * rng() : 0 }),
  )
}

function randomPattern(rng: Random, items: ItemParams[], theta: number, D: number): number[] {
  return items.map((item) => (rng() < probability(theta, item, D) ? 1 : 0))
}

describe('maximum likelihood (Fisher scoring)', () => {
  it('reproduces Baker\'s three-item example: θ̂ = 0.324846, SE = 1.22957', () => {
    // CHECKS.md 1a [C]; from memory the book reports θ̂ ≈ .32–.325, SE ≈ 1.23 after three iterations [M]
    const result = estimateMle(BAKER_ITEMS, BAKER_PATTERN, { start: 1 })
    expect(result.status).toBe('converged')
    expect(result.theta).toBeCloseTo(0.324846, 6)
    expect(result.se).toBeCloseTo(1.22957, 5)
    expect(testInformation(result.theta, BAKER_ITEMS)).toBeCloseTo(0.661446, 6)
    // the iteration path from θ = 1.0: Δθ = −0.7733, +0.0973, +0.0009 (CHECKS.md 1a table [C])
    expect(result.path[0]).toBeCloseTo(0.2267, 4)
    expect(result.path[1]).toBeCloseTo(0.3239, 4)
    expect(result.path[2]).toBeCloseTo(0.3248, 4)
  })
  it('bounds the step: no iteration moves θ by more than maxStep', () => {
    const items = [makeItem('2pl', { a: 2, b: 3 }), makeItem('2pl', { a: 2, b: 3.2 }), makeItem('2pl', { a: 0.3, b: -2 })]
    const result = estimateMle(items, [1, 0, 0], { start: -3, maxStep: 0.5 })
    let previous = -3
    for (const theta of result.path) {
      expect(Math.abs(theta - previous)).toBeLessThanOrEqual(0.5 + 1e-12)
      previous = theta
    }
    expect(result.status).toBe('converged')
    expect(result.theta).toBeCloseTo(bruteForceMle(items, [1, 0, 0], 1), 5)
  })
  it('reports all-correct and all-wrong patterns instead of iterating', () => {
    expect(estimateMle(BAKER_ITEMS, [1, 1, 1])).toMatchObject({ status: 'all-correct', theta: Infinity, iterations: 0 })
    expect(estimateMle(BAKER_ITEMS, [0, 0, 0])).toMatchObject({ status: 'all-wrong', theta: -Infinity, iterations: 0 })
  })
  it('reports a 3PL pattern without a finite maximum as at-bound', () => {
    // one lucky correct answer on a very hard item with guessing: the likelihood rises as θ → −∞
    const items = [makeItem('3pl', { a: 1.5, b: 2.5, c: 0.25 }), makeItem('3pl', { a: 1.5, b: -1, c: 0.25 }), makeItem('3pl', { a: 1.5, b: -0.5, c: 0.25 })]
    const result = estimateMle(items, [1, 0, 0])
    expect(result.status).toBe('at-bound')
    expect(logLikelihood(-6, items, [1, 0, 0])).toBeGreaterThan(logLikelihood(-3, items, [1, 0, 0]))
  })
  it('agrees with a brute-force maximisation on random 2PL and 3PL patterns, D = 1 and 1.702', () => {
    const rng = mulberry32(11)
    let checked = 0
    for (let trial = 0; trial < 60; trial++) {
      const D = trial % 2 === 0 ? 1 : 1.702
      const items = randomItems(rng, 10 + (trial % 15), trial % 3 === 0 ? '3pl' : '2pl')
      const pattern = randomPattern(rng, items, normalDraw(rng), D)
      const result = estimateMle(items, pattern, { D })
      if (result.status !== 'converged') continue
      checked++
      expect(Math.abs(result.theta - bruteForceMle(items, pattern, D))).toBeLessThan(1e-4)
    }
    expect(checked).toBeGreaterThan(40)
  })
  it('rejects malformed patterns', () => {
    expect(() => estimateMle(BAKER_ITEMS, [1, 0])).toThrow(/2 responses for 3 items/)
    expect(() => estimateMle(BAKER_ITEMS, [1, 2, 0])).toThrow(/response 1: must be 0 or 1/)
    expect(() => estimateMle([], [])).toThrow(/at least one response/)
  })
})

describe('EAP (quadrature, normal prior)', () => {
  it('reproduces the regression values for Baker\'s items with a N(0,1) prior', () => {
    // CHECKS.md 1e [C] (no published EAP example exists): 0.144703 / 0.788536 on fine grids,
    // 0.144699 / 0.788522 with 41 points at step 0.2 on [−4, 4]
    const fine = estimateEap(BAKER_ITEMS, BAKER_PATTERN) // default: 61 points over ±6 SD
    expect(fine.theta).toBeCloseTo(0.144703, 6)
    expect(fine.se).toBeCloseTo(0.788536, 6)
    const coarse = estimateEap(BAKER_ITEMS, BAKER_PATTERN, { quadrature: { points: 41, lower: -4, upper: 4 } })
    expect(coarse.theta).toBeCloseTo(0.144699, 6)
    expect(coarse.se).toBeCloseTo(0.788522, 6)
    // CHECKS.md 1e [C]: Rasch, one item b = 0 answered correctly: EAP 0.413242, PSD 0.910621
    const single = estimateEap([makeItem('rasch', { b: 0 })], [1])
    expect(single.theta).toBeCloseTo(0.413242, 6)
    expect(single.se).toBeCloseTo(0.910621, 6)
  })
  it('agrees with brute-force integration on random patterns, priors and D', () => {
    const rng = mulberry32(7)
    for (let trial = 0; trial < 40; trial++) {
      const D = trial % 2 === 0 ? 1 : 1.702
      const prior = { mean: normalDraw(rng) * 0.5, sd: 0.6 + rng() }
      const items = randomItems(rng, 1 + (trial % 30), trial % 4 === 0 ? '3pl' : '2pl')
      const pattern = randomPattern(rng, items, prior.mean + prior.sd * normalDraw(rng), D)
      const ours = estimateEap(items, pattern, { D, prior, quadrature: { points: 121 } })
      const reference = bruteForceEap(items, pattern, D, prior.mean, prior.sd)
      expect(Math.abs(ours.theta - reference.theta)).toBeLessThan(1e-6)
      expect(Math.abs(ours.se - reference.se)).toBeLessThan(1e-6)
    }
  })
  it('shifts with the prior mean and shrinks less with a wider prior', () => {
    const base = estimateEap(BAKER_ITEMS, BAKER_PATTERN)
    const shifted = estimateEap(BAKER_ITEMS, BAKER_PATTERN, { prior: { mean: 1, sd: 1 } })
    const wide = estimateEap(BAKER_ITEMS, BAKER_PATTERN, { prior: { mean: 0, sd: 3 } })
    expect(shifted.theta).toBeGreaterThan(base.theta + 0.3)
    expect(Math.abs(wide.theta - 0.324846)).toBeLessThan(Math.abs(base.theta - 0.324846)) // closer to the MLE
    expect(wide.se).toBeGreaterThan(base.se)
  })
  it('stays finite for very long all-correct tests (log-space accumulation)', () => {
    const items = Array.from({ length: 400 }, (_, j) => makeItem('2pl', { a: 2.5, b: -2 + j / 100 }))
    const result = estimateEap(items, items.map(() => 1))
    expect(Number.isFinite(result.theta) && Number.isFinite(result.se)).toBe(true)
    expect(result.theta).toBeGreaterThan(3)
  })
  it('batch EAP equals one-by-one EAP, including people who skipped items', () => {
    const rows = [[1, 0, 1], [1, null, 1], [0, 0, 0], [null, null, null]]
    const batch = eapBatch(BAKER_ITEMS, fromDense(rows))
    expect(batch.theta[0]).toBeCloseTo(estimateEap(BAKER_ITEMS, [1, 0, 1]).theta, 12)
    expect(batch.se[1]).toBeCloseTo(estimateEap([BAKER_ITEMS[0], BAKER_ITEMS[2]], [1, 1]).se, 12)
    expect(batch.theta[2]).toBeCloseTo(estimateEap(BAKER_ITEMS, [0, 0, 0]).theta, 12)
    expect(Number.isNaN(batch.theta[3])).toBe(true)
  })
  it('rejects grids below 41 points and bad priors', () => {
    expect(() => estimateEap(BAKER_ITEMS, BAKER_PATTERN, { quadrature: { points: 21 } })).toThrow(/>= 41/)
    expect(() => estimateEap(BAKER_ITEMS, BAKER_PATTERN, { prior: { mean: 0, sd: 0 } })).toThrow(/prior sd/)
  })
})

describe('estimateAbility: default method and fallbacks', () => {
  it('defaults to EAP', () => {
    expect(estimateAbility(BAKER_ITEMS, BAKER_PATTERN)).toMatchObject({ method: 'eap', fallback: null, nItems: 3 })
  })
  it('MLE requested: returns MLE when it exists, EAP with the reason when it does not', () => {
    const mle = estimateAbility(BAKER_ITEMS, BAKER_PATTERN, { method: 'mle' })
    expect(mle).toMatchObject({ method: 'mle', fallback: null })
    expect(mle.theta).toBeCloseTo(0.324846, 5)
    const allRight = estimateAbility(BAKER_ITEMS, [1, 1, 1], { method: 'mle' })
    expect(allRight).toMatchObject({ method: 'eap', fallback: 'all-correct' })
    expect(allRight.theta).toBeCloseTo(estimateEap(BAKER_ITEMS, [1, 1, 1]).theta, 12)
    expect(estimateAbility(BAKER_ITEMS, [0, 0, 0], { method: 'mle' }).fallback).toBe('all-wrong')
    expect(fallbackNote('all-wrong')).toMatch(/EAP used/)
    expect(() => estimateAbility(BAKER_ITEMS, BAKER_PATTERN, { method: 'map' as never })).toThrow(/unknown estimation method/)
  })
  it('batch MLE falls back per person', () => {
    const out = estimateAbilities(BAKER_ITEMS, fromDense([[1, 0, 1], [1, 1, 1]]), { method: 'mle' })
    expect(out[0]).toMatchObject({ method: 'mle', fallback: null })
    expect(out[1]).toMatchObject({ method: 'eap', fallback: 'all-correct' })
  })
})

describe('independent reference: @bdelab/jscat 1.0.5', () => {
  // jscat uses the 4PL form c + (d − c)/(1 + exp(−a(θ − b))) with no scaling constant (D = 1); d = 1 gives our 3PL.
  // Its MLE minimises −log L with a coordinate gradient method that stops when |d log L/dθ| < 0.01
  // (optimization-js minimize_Powell, eps = 1e-2), so its θ̂ is off the true maximum by about 0.01/I(θ̂).
  // Its EAP (1.0.5) weights the prior by the log-likelihood instead of the likelihood, so it is not a
  // posterior mean and cannot serve as a reference; EAP is checked against brute-force integration above.
  const toZeta = (item: ItemParams) => ({ a: item.a, b: item.b, c: item.c, d: 1 })

  it('item response and information functions agree', () => {
    const rng = mulberry32(3)
    for (let i = 0; i < 200; i++) {
      const item = makeItem('3pl', { a: 0.3 + 2 * rng(), b: 3 * normalDraw(rng), c: 0.3 * rng() })
      const theta = 4 * normalDraw(rng)
      expect(probability(theta, item)).toBeCloseTo(jscat.itemResponseFunction(theta, toZeta(item)), 14)
      expect(itemInformation(theta, item)).toBeCloseTo(jscat.fisherInformation(theta, toZeta(item)), 12)
    }
  })
  it('MLE and its SE agree on random 2PL patterns within jscat\'s gradient tolerance', () => {
    const rng = mulberry32(5)
    let checked = 0
    for (let trial = 0; trial < 30; trial++) {
      const items = randomItems(rng, 15 + (trial % 16), '2pl')
      const pattern = randomPattern(rng, items, normalDraw(rng), 1)
      const ours = estimateMle(items, pattern)
      if (ours.status !== 'converged' || Math.abs(ours.theta) > 3.5) continue
      checked++
      const theirs = jscat.estimateAbility(pattern as Array<0 | 1>, items.map(toZeta), 'MLE') as number
      const info = testInformation(ours.theta, items)
      expect(Math.abs(ours.theta - theirs)).toBeLessThan(0.012 / info + 1e-4)
      expect(1 / Math.sqrt(testInformation(theirs, items))).toBeCloseTo(jscat.SEM(theirs, items.map(toZeta)), 12)
    }
    expect(checked).toBeGreaterThan(20)
  })
})

describe('simulation: 2,000 people × 30 2PL items (seeded)', () => {
  const rng = mulberry32(2024)
  const items = Array.from({ length: 30 }, () => makeItem('2pl', { a: 0.8 + 1.2 * rng(), b: 1.2 * normalDraw(rng) }))
  const truth = Array.from({ length: 2000 }, () => normalDraw(rng))
  const rows = truth.map((theta) => randomPattern(rng, items, theta, 1))
  const matrix = fromDense(rows)

  function summary(estimates: Array<{ theta: number; se: number }>, keep: (i: number) => boolean) {
    const idx = truth.map((_, i) => i).filter(keep)
    const mean = (xs: number[]) => xs.reduce((s, x) => s + x, 0) / xs.length
    const t = idx.map((i) => truth[i])
    const e = idx.map((i) => estimates[i].theta)
    const mt = mean(t)
    const me = mean(e)
    const cov = mean(idx.map((_, k) => (t[k] - mt) * (e[k] - me)))
    const corr = cov / Math.sqrt(mean(t.map((x) => (x - mt) ** 2)) * mean(e.map((x) => (x - me) ** 2)))
    const rmse = Math.sqrt(mean(idx.map((_, k) => (e[k] - t[k]) ** 2)))
    const meanSe = mean(idx.map((i) => estimates[i].se))
    return { corr, rmse, meanSe, n: idx.length }
  }

  it('EAP: corr(θ̂, θ) ≥ 0.9 and mean posterior SD within 15% of the empirical RMSE', () => {
    // acceptance criteria of issue 6 (simulation design: common practice, no source)
    const s = summary(estimateAbilities(items, matrix), () => true)
    expect(s.corr).toBeGreaterThanOrEqual(0.9)
    expect(Math.abs(s.meanSe / s.rmse - 1)).toBeLessThanOrEqual(0.15)
  })
  it('MLE (finite estimates): corr ≥ 0.9 and mean SE within 15% of the empirical RMSE', () => {
    const estimates = estimateAbilities(items, matrix, { method: 'mle' })
    const s = summary(estimates, (i) => estimates[i].method === 'mle')
    expect(s.n).toBeGreaterThan(1900)
    expect(s.corr).toBeGreaterThanOrEqual(0.9)
    expect(Math.abs(s.meanSe / s.rmse - 1)).toBeLessThanOrEqual(0.15)
  })
})
