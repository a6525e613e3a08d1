import { describe, it, expect } from 'vitest'
import { calibrate } from '../../src/ability/calibrate.ts'
import { fromDense, fromTriples } from '../../src/ability/response-data.ts'
import { makeItem, type ItemParams } from '../../src/ability/response-function.ts'
import { mulberry32, normalDraw, simulateResponses } from '../../src/ability/simulate.ts'
import { itemFit } from '../../src/ability/item-fit.ts'
import { invertSpd } from '../../src/ability/linear-algebra.ts'

// LSAT section 6 data, Bock & Lieberman (1970): 1,000 people, 5 items, 32 patterns in binary order
// 00000 … 11111; frequencies as in the OpenBUGS "LSAT" example (stored in several public repositories) [S]
const LSAT_FREQUENCIES = [3, 6, 2, 11, 1, 1, 3, 4, 1, 8, 0, 16, 0, 3, 2, 15, 10, 29, 14, 81, 3, 28, 15, 80, 16, 56, 21, 173, 11, 61, 28, 298]
function lsatRows(): number[][] {
  const rows: number[][] = []
  LSAT_FREQUENCIES.forEach((count, pattern) => {
    for (let i = 0; i < count; i++) rows.push([4, 3, 2, 1, 0].map((shift) => (pattern >> shift) & 1))
  })
  return rows
}

describe('Bock–Aitkin EM on the LSAT data', () => {
  const matrix = fromDense(lsatRows())

  it('2PL matches R ltm (CHECKS.md 1e optional cross-check)', () => {
    // CHECKS.md 1e [S, README excerpt of R ltm output, 21 Gauss–Hermite points]:
    // b = (−3.3597, −1.3696, −0.2799, −1.8659, −3.1236), a = (0.8254, 0.7229, 0.8905, 0.6886, 0.6575), logLik −2466.653.
    // Our grid is 61 rectangle points, so agreement is to about 1e-3, not to print precision.
    const result = calibrate(matrix, { model: '2pl' })
    expect(result.converged).toBe(true)
    expect(result.logLikelihood).toBeCloseTo(-2466.653, 2)
    const b = [-3.3597, -1.3696, -0.2799, -1.8659, -3.1236]
    const a = [0.8254, 0.7229, 0.8905, 0.6886, 0.6575]
    result.items.forEach((item, j) => {
      expect(item.status).toBe('converged')
      expect(Math.abs(item.params!.b - b[j])).toBeLessThan(2e-3)
      expect(Math.abs(item.params!.a - a[j])).toBeLessThan(1e-3)
      expect(item.se!.a).toBeGreaterThan(0.1)
      expect(item.se!.b).toBeGreaterThan(0.05)
    })
    expect(result.populationSd).toBe(1)
  })

  it('Rasch with free latent SD matches ltm/mirt (Rizopoulos 2006, J Stat Softw 17(5))', () => {
    // [S] ltm rasch(LSAT) output stored in a public repository and cited there as Rizopoulos (2006) pp. 10–11:
    // log.Lik −2466.938, common discrimination 0.7551 (std.err 0.0694), difficulties −3.6153, −1.3224,
    // −0.3176, −1.7301, −2.7802 in the SD(θ) = 1 metric; mirt (61 points) prints the same log-likelihood.
    // Our Rasch keeps a = 1 and estimates σ = SD(θ), so σ·D = 0.7551 and b/σ = the ltm difficulty.
    const result = calibrate(matrix, { model: 'rasch' })
    expect(result.converged).toBe(true)
    expect(result.logLikelihood).toBeCloseTo(-2466.938, 2)
    expect(result.populationSd).toBeCloseTo(0.7551, 3)
    // XPD standard error vs ltm's Hessian-based one: same quantity estimated two ways, within 5%
    expect(Math.abs(result.populationSdSe! / 0.0694 - 1)).toBeLessThan(0.05)
    const ltm = [-3.6153, -1.3224, -0.3176, -1.7301, -2.7802]
    result.items.forEach((item, j) => {
      expect(item.params!.a).toBe(1)
      expect(Math.abs(item.params!.b / result.populationSd - ltm[j])).toBeLessThan(2e-3)
    })
  })

  it('the marginal log-likelihood never decreases across EM cycles', () => {
    // a defining property of EM (Dempster, Laird & Rubin 1977)
    for (const model of ['2pl', 'rasch'] as const) {
      const { history } = calibrate(matrix, { model })
      expect(history.length).toBeGreaterThan(5)
      for (let i = 1; i < history.length; i++) expect(history[i]).toBeGreaterThanOrEqual(history[i - 1] - 1e-9)
    }
  })
})

describe('parameter recovery by simulation (seeded)', () => {
  it('2PL: 5,000 people × 20 items recovers b with RMSE ≤ 0.15 and a with RMSE ≤ 0.2', () => {
    // acceptance criteria of issue 6; design (θ ~ N(0,1), a ~ U(0.6, 2), b ~ N(0,1) clipped to ±2.5) is common practice, no source
    const rng = mulberry32(99)
    const truth: ItemParams[] = Array.from({ length: 20 }, () =>
      makeItem('2pl', { a: 0.6 + 1.4 * rng(), b: Math.max(-2.5, Math.min(2.5, normalDraw(rng))) }),
    )
    const thetas = Float64Array.from({ length: 5000 }, () => normalDraw(rng))
    const result = calibrate(simulateResponses(thetas, truth, rng), { model: '2pl', diagnostics: false })
    expect(result.converged).toBe(true)
    const rmse = (key: 'a' | 'b') =>
      Math.sqrt(result.items.reduce((s, item, j) => s + (item.params![key] - truth[j][key]) ** 2, 0) / truth.length)
    expect(rmse('b')).toBeLessThanOrEqual(0.15)
    expect(rmse('a')).toBeLessThanOrEqual(0.2)
  })

  it('2PL with sparse data (each person answers 15 of 30 items, as in adaptive or rotated forms)', () => {
    const rng = mulberry32(123)
    const truth = Array.from({ length: 30 }, () => makeItem('2pl', { a: 0.7 + rng(), b: Math.max(-2, Math.min(2, normalDraw(rng))) }))
    const persons: number[] = []
    const itemIndex: number[] = []
    const responses: number[] = []
    for (let p = 0; p < 4000; p++) {
      const theta = normalDraw(rng)
      const order = truth.map((_, j) => j).sort(() => rng() - 0.5).slice(0, 15)
      for (const j of order) {
        persons.push(p)
        itemIndex.push(j)
        responses.push(rng() < 1 / (1 + Math.exp(-truth[j].a * (theta - truth[j].b))) ? 1 : 0)
      }
    }
    const result = calibrate(fromTriples(4000, 30, persons, itemIndex, responses), { model: '2pl', diagnostics: false })
    expect(result.converged).toBe(true)
    const rmse = (key: 'a' | 'b') => Math.sqrt(result.items.reduce((s, item, j) => s + (item.params![key] - truth[j][key]) ** 2, 0) / truth.length)
    expect(rmse('b')).toBeLessThanOrEqual(0.15)
    expect(rmse('a')).toBeLessThanOrEqual(0.2)
  })

  it('Rasch with D = 1.702 and σ = 1.3: recovers b and the latent SD', () => {
    const rng = mulberry32(17)
    const D = 1.702
    const truth = Array.from({ length: 20 }, (_, j) => makeItem('rasch', { b: -1.9 + j * 0.2 }))
    const thetas = Float64Array.from({ length: 3000 }, () => 1.3 * normalDraw(rng))
    const result = calibrate(simulateResponses(thetas, truth, rng, D), { model: 'rasch', D })
    expect(result.converged).toBe(true)
    expect(Math.abs(result.populationSd - 1.3)).toBeLessThan(0.05)
    const errors = result.items.map((item) => item.params!.b - truth[item.index].b)
    expect(Math.sqrt(errors.reduce((s, e) => s + e * e, 0) / errors.length)).toBeLessThan(0.08)
  })

  it('Rasch fit statistics single out an item generated with a flat curve', () => {
    const rng = mulberry32(17)
    const truth = Array.from({ length: 20 }, (_, j) => makeItem('rasch', { b: -1.9 + j * 0.2 }))
    // item 7 is generated with a much flatter curve than the Rasch model allows: it should underfit
    const generating = truth.map((item, j) => (j === 7 ? { ...item, a: 0.25 } : item))
    const thetas = Float64Array.from({ length: 3000 }, () => 1.3 * normalDraw(rng))
    const result = calibrate(simulateResponses(thetas, generating, rng), { model: 'rasch' })
    const misfit = result.items[7].fit!
    expect(misfit.outfit).toBeGreaterThan(1.5)
    expect(misfit.infit).toBeGreaterThan(1.3)
    expect(misfit.infitZ).toBeGreaterThan(3)
    expect(misfit.misfit).toBe(true)
    for (const item of result.items) {
      if (item.index === 7) continue
      expect(item.fit!.infit).toBeGreaterThan(0.85)
      expect(item.fit!.infit).toBeLessThan(1.15)
      expect(item.fit!.misfit).toBe(false)
    }
  })
})

describe('anchored calibration (new items alongside items with known parameters)', () => {
  it('2PL: anchors keep their parameters; new items and the population are recovered on the anchors\' metric', () => {
    const rng = mulberry32(31)
    const truth: ItemParams[] = Array.from({ length: 20 }, (_, j) =>
      j < 12 ? makeItem('3pl', { a: 0.7 + rng(), b: normalDraw(rng), c: j % 4 === 0 ? 0.2 : 0 }) : makeItem('2pl', { a: 0.7 + rng(), b: normalDraw(rng) }),
    )
    // the people assessed now are abler and more spread out than the anchors' calibration sample
    const thetas = Float64Array.from({ length: 4000 }, () => 0.5 + 1.3 * normalDraw(rng))
    const fixed = truth.map((item, j) => (j < 12 ? item : null))
    const result = calibrate(simulateResponses(thetas, truth, rng), { model: '2pl', fixed })
    expect(result.converged).toBe(true)
    expect(result.populationMean).toBeCloseTo(0.5, 1)
    expect(result.populationSd).toBeCloseTo(1.3, 1)
    for (let j = 0; j < 12; j++) {
      expect(result.items[j].status).toBe('fixed')
      expect(result.items[j].params).toEqual(truth[j])
      expect(result.items[j].se).toBeNull()
    }
    const fresh = result.items.slice(12)
    expect(fresh.every((item) => item.status === 'converged')).toBe(true)
    const rmse = (key: 'a' | 'b') => Math.sqrt(fresh.reduce((s, item) => s + (item.params![key] - truth[item.index][key]) ** 2, 0) / fresh.length)
    expect(rmse('b')).toBeLessThan(0.15)
    expect(rmse('a')).toBeLessThan(0.2)
    // without the population update (people assumed N(0, 1)) the new items would be off by about the mean shift
    const naive = fresh.reduce((s, item) => s + item.params!.b - truth[item.index].b, 0) / fresh.length
    expect(Math.abs(naive)).toBeLessThan(0.1)
  })
  it('Rasch: anchors fix the location; mean and SD of the people are estimated', () => {
    const rng = mulberry32(32)
    const truth = Array.from({ length: 16 }, (_, j) => makeItem('rasch', { b: -1.5 + j * 0.2 }))
    const thetas = Float64Array.from({ length: 3000 }, () => 0.5 + 1.2 * normalDraw(rng))
    const fixed = truth.map((item, j) => (j % 2 === 0 ? item : null))
    const result = calibrate(simulateResponses(thetas, truth, rng), { model: 'rasch', fixed })
    expect(result.converged).toBe(true)
    expect(result.populationMean).toBeCloseTo(0.5, 1)
    expect(result.populationSd).toBeCloseTo(1.2, 1)
    const free = result.items.filter((item) => item.status === 'converged')
    expect(free).toHaveLength(8)
    const rmse = Math.sqrt(free.reduce((s, item) => s + (item.params!.b - truth[item.index].b) ** 2, 0) / free.length)
    expect(rmse).toBeLessThan(0.08)
    expect(() => calibrate(simulateResponses(thetas, truth, rng), { fixed: [null] })).toThrow(/fixed has 1 entries for 16 items/)
  })
})

describe('items that cannot be calibrated are reported, not dropped', () => {
  const rng = mulberry32(5)
  const items = Array.from({ length: 6 }, (_, j) => makeItem('2pl', { a: 1.2, b: -1 + j * 0.4 }))
  const thetas = Float64Array.from({ length: 800 }, () => normalDraw(rng))
  const base = simulateResponses(thetas, items, rng)

  it('flags all-correct, all-wrong, sparse and negatively discriminating items with a note', () => {
    const persons: number[] = []
    const itemIndex: number[] = []
    const responses: number[] = []
    for (let p = 0; p < base.nPersons; p++) {
      for (let e = base.start[p]; e < base.start[p + 1]; e++) {
        persons.push(p)
        itemIndex.push(base.item[e])
        responses.push(base.response[e])
      }
      persons.push(p, p)
      itemIndex.push(6, 7)
      responses.push(1, 0) // item 6: everyone right; item 7: everyone wrong
      // item 9: reversed (people who do well overall tend to fail it)
      persons.push(p)
      itemIndex.push(9)
      responses.push(rng() < 1 / (1 + Math.exp(1.5 * thetas[p])) ? 1 : 0)
    }
    for (let p = 0; p < 4; p++) {
      persons.push(p)
      itemIndex.push(8)
      responses.push(p % 2) // item 8: only four responses
    }
    const result = calibrate(fromTriples(base.nPersons, 10, persons, itemIndex, responses), { model: '2pl' })
    expect(result.items).toHaveLength(10)
    expect(result.items[6]).toMatchObject({ status: 'all-correct', params: null })
    expect(result.items[7]).toMatchObject({ status: 'all-wrong', params: null })
    expect(result.items[8]).toMatchObject({ status: 'too-few-responses', nResponses: 4 })
    expect(result.items[8].note).toMatch(/only 4 responses/)
    expect(result.items[9].status).toBe('out-of-range')
    expect(result.items[9].note).toMatch(/outside the plausible range/)
    for (let j = 0; j < 6; j++) expect(result.items[j].status).toBe('converged')
  })

  it('marks items still moving at the cycle limit as not-converged', () => {
    const result = calibrate(base, { model: '2pl', maxCycles: 2 })
    expect(result.converged).toBe(false)
    expect(result.cycles).toBe(2)
    expect(result.items.every((item) => item.status === 'not-converged')).toBe(true)
    expect(result.items[0].note).toMatch(/after 2 cycles/)
  })

  it('rejects bad options', () => {
    expect(() => calibrate(base, { model: '3pl' as never })).toThrow(/rasch or 2pl/)
    expect(() => calibrate(base, { D: 0 })).toThrow(/D must be > 0/)
    expect(() => calibrate(base, { quadrature: { points: 11 } })).toThrow(/>= 41/)
  })
})

describe('helpers', () => {
  it('invertSpd inverts a symmetric positive-definite matrix and refuses a singular one', () => {
    const inverse = invertSpd(Float64Array.from([4, 2, 2, 3]), 2)!
    expect(Array.from(inverse)).toEqual([0.375, -0.25, -0.25, 0.5].map((v) => expect.closeTo(v, 14)))
    expect(invertSpd(Float64Array.from([1, 1, 1, 1]), 2)).toBeNull()
  })
  it('item fit: a perfectly predictable (Guttman) item overfits, a random one underfits', () => {
    const thetas = Array.from({ length: 400 }, (_, i) => -3 + (6 * i) / 399)
    const items = [makeItem('rasch', { b: 0 }), makeItem('rasch', { b: 0 })]
    const rng = mulberry32(1)
    const rows = thetas.map((t) => [t > 0 ? 1 : 0, rng() < 0.5 ? 1 : 0])
    const [guttman, noise] = itemFit(items, fromDense(rows), thetas)
    expect(guttman.outfit).toBeLessThan(0.5)
    expect(guttman.misfit).toBe(true)
    expect(noise.outfit).toBeGreaterThan(1.5)
    expect(noise.outfitZ).toBeGreaterThan(3)
  })
})
