import { describe, it, expect } from 'vitest'
import { probability, makeItem, trueScore, validateItem, D_NORMAL_OGIVE } from '../../src/ability/response-function.ts'
import { itemInformation, testInformation, maxInformation } from '../../src/ability/information.ts'
import { normalCdf, normalPdf, normalQuantile } from '../../src/ability/normal.ts'

const THETAS = [-3, -2, -1, 0, 1, 2, 3]

/** Composite Simpson rule, written here independently of src/ to check Φ. */
function simpson(f: (x: number) => number, lower: number, upper: number, intervals: number): number {
  const h = (upper - lower) / intervals
  let sum = f(lower) + f(upper)
  for (let i = 1; i < intervals; i++) sum += (i % 2 === 1 ? 4 : 2) * f(lower + i * h)
  return (sum * h) / 3
}

describe('normal distribution', () => {
  it('Φ matches numerical integration of the density', () => {
    // independent check: Φ(x) = 1/2 + ∫_0^x φ(t) dt by Simpson's rule with 20,000 intervals
    const density = (t: number) => Math.exp(-t * t / 2) / Math.sqrt(2 * Math.PI)
    for (const x of [-6, -3.7, -2, -1, -0.3, 0, 0.5, 1, 1.959963984540054, 3, 5]) {
      const reference = 0.5 + Math.sign(x) * simpson(density, 0, Math.abs(x), 20000)
      expect(Math.abs(normalCdf(x) - reference)).toBeLessThan(1e-13)
    }
  })
  it('Φ keeps relative precision in the far lower tail', () => {
    // Mills-ratio asymptotics: Φ(−x) ≈ φ(x)/x · (1 − 1/x² + 3/x⁴ − 15/x⁶) (standard series, common practice, no source)
    for (const x of [10, 20, 30]) {
      const series = (normalPdf(x) / x) * (1 - 1 / x ** 2 + 3 / x ** 4 - 15 / x ** 6)
      expect(Math.abs(normalCdf(-x) / series - 1)).toBeLessThan(1e-4)
    }
    expect(normalCdf(-40)).toBe(0)
    expect(normalCdf(40)).toBe(1)
  })
  it('quantile inverts Φ and rejects p outside (0, 1)', () => {
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 9) // z(0.975), standard table value [M]
    for (const p of [1e-10, 0.01, 0.3, 0.5, 0.9]) expect(normalCdf(normalQuantile(p))).toBeCloseTo(p, 12)
    expect(() => normalQuantile(0)).toThrow(RangeError)
    expect(() => normalQuantile(1.2)).toThrow(/0 < p < 1/)
  })
})

describe('item response functions', () => {
  it('P(θ = b) = 0.5 for Rasch and 2PL, (1 + c)/2 for 3PL', () => {
    // logistic facts: Baker (2001) ch. 2 [M]; also follows directly from the formula
    expect(probability(1, makeItem('rasch', { b: 1 }))).toBe(0.5)
    expect(probability(-0.7, makeItem('2pl', { a: 2.3, b: -0.7 }))).toBe(0.5)
    expect(probability(1.5, makeItem('3pl', { a: 1.3, b: 1.5, c: 0.2 }))).toBeCloseTo(0.6, 15)
    expect(probability(0.4, makeItem('3pl', { a: 0.7, b: 0.4, c: 0.25 }), D_NORMAL_OGIVE)).toBeCloseTo(0.625, 15)
  })
  it('a = 0.78, b = 0: P(θ = 5) ≈ 0.98', () => {
    // common practice, no source: a moderately discriminating item is almost surely passed 5 units above b
    expect(probability(5, makeItem('2pl', { a: 0.78, b: 0 }))).toBeCloseTo(0.98, 2)
  })
  it('reproduces Baker (2001) ch. 2 item characteristic curve tables (D = 1)', () => {
    // CHECKS.md 1b: parameters from Baker (2001) ch. 2 [M], 3PL also birtr icc(1.5, 1.3, .2) [S]; values [C]
    const table: Array<[ReturnType<typeof makeItem>, number[], number]> = [
      [makeItem('2pl', { a: 0.5, b: 1 }), [0.119, 0.182, 0.269, 0.378, 0.5, 0.622, 0.731], 3],
      [makeItem('rasch', { b: 1 }), [0.018, 0.047, 0.119, 0.269, 0.5, 0.731, 0.881], 3],
      [makeItem('3pl', { a: 1.3, b: 1.5, c: 0.2 }), [0.2023, 0.2084, 0.2299, 0.2996, 0.4744, 0.7256, 0.9004], 4],
    ]
    for (const [item, expected, digits] of table) {
      THETAS.forEach((theta, i) => expect(probability(theta, item)).toBeCloseTo(expected[i], digits))
    }
  })
  it('reproduces the D = 1.702 facts', () => {
    // CHECKS.md 1d [C]: a = 1, b = 0, D = 1.702: P(1) = 0.845796, P(−1) = 0.154204; D = 1.7: P(1) = 0.845535
    const item = makeItem('2pl', { a: 1, b: 0 })
    expect(probability(1, item, D_NORMAL_OGIVE)).toBeCloseTo(0.845796, 6)
    expect(probability(-1, item, D_NORMAL_OGIVE)).toBeCloseTo(0.154204, 6)
    expect(probability(1, item, 1.7)).toBeCloseTo(0.845535, 6)
    // Haley (1952) via Camilli (1994) [M]: |Φ(x) − logistic(1.702x)| < 0.01 for all x; recomputed max 0.009486 (CHECKS.md 1d [C])
    let worst = 0
    for (let x = -6; x <= 6; x += 0.0005) worst = Math.max(worst, Math.abs(normalCdf(x) - probability(x, item, D_NORMAL_OGIVE)))
    expect(worst).toBeLessThan(0.01)
    expect(worst).toBeCloseTo(0.009486, 6)
  })
  it('true score: birtr tcc example gives 3.000 at θ = 0', () => {
    // CHECKS.md 1c: birtr tcc(b = (−2,−1,0,1,2), a = (.5,.75,1,.75,.5), c = .2) [S], value [C]
    const items = [-2, -1, 0, 1, 2].map((b, j) => makeItem('3pl', { a: [0.5, 0.75, 1, 0.75, 0.5][j], b, c: 0.2 }))
    expect(trueScore(0, items)).toBeCloseTo(3, 3)
  })
  it('rejects impossible parameters with the field named', () => {
    expect(() => makeItem('2pl', { a: 0, b: 0 })).toThrow(/a must be/)
    expect(() => makeItem('3pl', { a: 1, b: 0, c: 1 })).toThrow(/c must be in \[0, 1\)/)
    expect(() => validateItem({ a: 1, b: Number.NaN, c: 0 }, 'item q7')).toThrow(/item q7: b must be/)
    // Rasch ignores a given a; 2PL ignores a given c
    expect(makeItem('rasch', { a: 3, b: 0 }).a).toBe(1)
    expect(makeItem('2pl', { a: 1, b: 0, c: 0.3 }).c).toBe(0)
  })
})

describe('information functions', () => {
  it('reproduces Baker (2001) ch. 6 style item information tables', () => {
    // CHECKS.md 1c: I = a²(Q/P)((P − c)/(1 − c))², parameters [M], values [C]
    const twoPl = makeItem('2pl', { a: 1.5, b: 1 })
    const rasch = makeItem('rasch', { b: 1 })
    const threePl = makeItem('3pl', { a: 1.5, b: 1, c: 0.2 })
    const p2 = [0.0025, 0.011, 0.0474, 0.1824, 0.5, 0.8176, 0.9526]
    const i2 = [0.0055, 0.0244, 0.1016, 0.3356, 0.5625, 0.3356, 0.1016]
    const iR = [0.0177, 0.0452, 0.105, 0.1966, 0.25, 0.1966, 0.105]
    const i3 = [0.0001, 0.001, 0.0162, 0.1416, 0.375, 0.257, 0.0805]
    THETAS.forEach((theta, i) => {
      expect(probability(theta, twoPl)).toBeCloseTo(p2[i], 4)
      expect(itemInformation(theta, twoPl)).toBeCloseTo(i2[i], 4)
      expect(itemInformation(theta, rasch)).toBeCloseTo(iR[i], 4)
      expect(itemInformation(theta, threePl)).toBeCloseTo(i3[i], 4)
    })
    expect(itemInformation(1, twoPl)).toBe(0.5625) // = a²/4 at θ = b
  })
  it('3PL maximum information: closed form (Birnbaum; Lord 1980) matches CHECKS.md and a numerical search', () => {
    // CHECKS.md 1c: θmax = 1.17809, Imax = 0.383367 [C]; formula [M], Lord (1980)
    const item = makeItem('3pl', { a: 1.5, b: 1, c: 0.2 })
    const { theta, information } = maxInformation(item)
    expect(theta).toBeCloseTo(1.17809, 5)
    expect(information).toBeCloseTo(0.383367, 6)
    // independent: grid search of the information function itself
    let bestTheta = 0
    let best = 0
    for (let t = 0; t <= 2; t += 1e-5) {
      const value = itemInformation(t, item)
      if (value > best) [best, bestTheta] = [value, t]
    }
    expect(bestTheta).toBeCloseTo(theta, 4)
    expect(best).toBeCloseTo(information, 8)
    // with D = 1.702 the height scales by D² and the offset by 1/D
    const scaled = maxInformation(item, D_NORMAL_OGIVE)
    expect(scaled.information).toBeCloseTo(0.383367 * D_NORMAL_OGIVE ** 2, 5)
    expect(scaled.theta - 1).toBeCloseTo(0.17809 / D_NORMAL_OGIVE, 5)
    // c = 0: θmax = b and Imax = D²a²/4
    expect(maxInformation(makeItem('2pl', { a: 2, b: -1 }))).toEqual({ theta: -1, information: 1 })
  })
  it('test information: birtr tif example gives 1.47162 at θ = 0', () => {
    // CHECKS.md 1c: birtr tif(b = (−1,−.5,0,.5,1), a = (2,1.5,1.5,1.5,2), c = .2) [S], value [C]
    const items = [-1, -0.5, 0, 0.5, 1].map((b, j) => makeItem('3pl', { a: [2, 1.5, 1.5, 1.5, 2][j], b, c: 0.2 }))
    expect(testInformation(0, items)).toBeCloseTo(1.47162, 5)
  })
})
