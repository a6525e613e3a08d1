import { describe, it, expect } from 'vitest'
import { leastSquares } from '../../src/stats/least-squares.ts'
import { RankDeficientError } from '../../src/stats/householder-qr.ts'

/** Log relative error, NIST's accuracy measure: number of correct significant digits. */
function lre(estimate: number, certified: number): number {
  if (estimate === certified) return 15
  return -Math.log10(Math.abs(estimate - certified) / Math.abs(certified))
}

// NIST StRD "Norris" (lower difficulty): data and certified values as listed in CHECKS.md §7a [S]
// (certified values seen in scipy linregress, Apache Commons Math and GSL tests)
const NORRIS_Y = [
  0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3, 0.1, 778.1, 668.8, 339.3, 448.9, 10.8,
  557.7, 228.3, 998.0, 888.8, 119.6, 0.3, 0.6, 557.6, 339.3, 888.0, 998.5, 778.9, 10.2, 117.6, 228.9, 668.4, 449.2, 0.2,
]
const NORRIS_X = [
  0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4, 0.6, 775.5, 666.9, 338.0, 447.5, 11.6,
  556.0, 228.1, 995.8, 887.6, 120.2, 0.3, 0.3, 556.8, 339.1, 887.2, 999.0, 779.0, 11.1, 118.3, 229.2, 669.1, 448.9, 0.5,
]

// NIST StRD "Longley" (higher difficulty): y, x1..x6 in Longley.dat order, CHECKS.md §7b [S]
const LONGLEY = [
  [60323, 83.0, 234289, 2356, 1590, 107608, 1947], [61122, 88.5, 259426, 2325, 1456, 108632, 1948],
  [60171, 88.2, 258054, 3682, 1616, 109773, 1949], [61187, 89.5, 284599, 3351, 1650, 110929, 1950],
  [63221, 96.2, 328975, 2099, 3099, 112075, 1951], [63639, 98.1, 346999, 1932, 3594, 113270, 1952],
  [64989, 99.0, 365385, 1870, 3547, 115094, 1953], [63761, 100.0, 363112, 3578, 3350, 116219, 1954],
  [66019, 101.2, 397469, 2904, 3048, 117388, 1955], [67857, 104.6, 419180, 2822, 2857, 118734, 1956],
  [68169, 108.4, 442769, 2936, 2798, 120445, 1957], [66513, 110.8, 444546, 4681, 2637, 121950, 1958],
  [68655, 112.6, 482704, 3813, 2552, 123366, 1959], [69564, 114.2, 502601, 3931, 2514, 125368, 1960],
  [69331, 115.7, 518173, 4806, 2572, 127852, 1961], [70551, 116.9, 554894, 4007, 2827, 130081, 1962],
] as const
const LONGLEY_CERTIFIED = [
  [-3482258.63459582, 890420.383607373],
  [15.0618722713733, 84.9149257747669],
  [-0.35819179292591e-1, 0.334910077722432e-1],
  [-2.02022980381683, 0.488399681651699],
  [-1.03322686717359, 0.214274163161675],
  [-0.511041056535807e-1, 0.22607320006937],
  [1829.15146461355, 455.478499142212],
] as const

describe('leastSquares (Householder QR)', () => {
  it('reproduces the NIST StRD Norris certified values', () => {
    const fit = leastSquares(NORRIS_X.map((x) => [x]), NORRIS_Y)
    // certified values: NIST StRD Norris, via CHECKS.md §7a [S]
    expect(lre(fit.coefficients[0]!, -0.262323073774029)).toBeGreaterThan(9)
    expect(lre(fit.coefficients[1]!, 1.00211681802045)).toBeGreaterThan(12)
    expect(lre(fit.standardErrors[0]!, 0.232818234301152)).toBeGreaterThan(10)
    expect(lre(fit.standardErrors[1]!, 0.429796848199937e-3)).toBeGreaterThan(10)
    expect(lre(fit.residualSd, 0.884796396144373)).toBeGreaterThan(10)
    expect(lre(fit.rSquared, 0.999993745883712)).toBeGreaterThan(12)
    expect(lre(fit.sse, 26.6173985294224)).toBeGreaterThan(10)
    expect(lre(fit.ssr, 4255954.13232369)).toBeGreaterThan(10)
    expect(lre(fit.fStatistic, 5436385.54079785)).toBeGreaterThan(9)
  })

  it('reproduces the NIST StRD Longley certified values (ill-conditioned design)', () => {
    const fit = leastSquares(LONGLEY.map((row) => row.slice(1)), LONGLEY.map((row) => row[0]))
    // certified values: NIST StRD Longley, via CHECKS.md §7b [S]; measured LRE >= 11.4 on every value; a normal-equations solver gets far fewer
    LONGLEY_CERTIFIED.forEach(([estimate, sd], j) => {
      expect(lre(fit.coefficients[j]!, estimate)).toBeGreaterThan(11)
      expect(lre(fit.standardErrors[j]!, sd)).toBeGreaterThan(11)
    })
    expect(lre(fit.residualSd, 304.854073561965)).toBeGreaterThan(9)
    expect(lre(fit.rSquared, 0.995479004577296)).toBeGreaterThan(9)
    expect(lre(fit.fStatistic, 330.285339234588)).toBeGreaterThan(9)
  })

  it('fits an exact log-linear decay: y = 100·2^(−t/6) gives half-life 6 (CHECKS.md §7c [C])', () => {
    const t = Array.from({ length: 13 }, (_, i) => i)
    const fit = leastSquares(t.map((value) => [value]), t.map((value) => Math.log(100 * 2 ** (-value / 6))))
    expect(Math.log(2) / -fit.coefficients[1]!).toBeCloseTo(6, 12)
    expect(Math.exp(fit.coefficients[0]!)).toBeCloseTo(100, 10)
  })

  it('reproduces the log-linear half-life of the public forum example (CHECKS.md §7c [S + C])', () => {
    const fit = leastSquares([[10], [20], [30], [40]], [0.83, 0.68, 0.56, 0.46].map(Math.log))
    // recomputed exactly in CHECKS.md: k = 0.01964754, A = 1.009145, t½ = 35.279
    expect(-fit.coefficients[1]!).toBeCloseTo(0.01964754, 7)
    expect(Math.exp(fit.coefficients[0]!)).toBeCloseTo(1.009145, 5)
    expect(Math.log(2) / -fit.coefficients[1]!).toBeCloseTo(35.279, 3)
  })

  it('weighted fit equals the unweighted fit on rows repeated by their weights', () => {
    const x = [1, 2, 3, 4, 5]
    const y = [2.1, 3.9, 6.2, 7.8, 10.1]
    const weights = [1, 2, 3, 1, 2]
    const weighted = leastSquares(x.map((v) => [v]), y, { weights })
    const repeatedX: number[][] = []
    const repeatedY: number[] = []
    x.forEach((value, i) => {
      for (let copy = 0; copy < weights[i]!; copy++) {
        repeatedX.push([value])
        repeatedY.push(y[i]!)
      }
    })
    const repeated = leastSquares(repeatedX, repeatedY)
    expect(weighted.coefficients[0]).toBeCloseTo(repeated.coefficients[0]!, 12)
    expect(weighted.coefficients[1]).toBeCloseTo(repeated.coefficients[1]!, 12)
  })

  it('fails clearly on rank-deficient, short or malformed input', () => {
    expect(() => leastSquares([[1, 2], [2, 4], [3, 6], [4, 8]], [1, 2, 3, 4])).toThrow(RankDeficientError)
    expect(() => leastSquares([[1], [2]], [1, 2])).toThrow(/more rows than coefficients/)
    expect(() => leastSquares([[1], [2], [3]], [1, 2])).toThrow(/one predictor row per response/)
    expect(() => leastSquares([[1], [2], [Number.NaN]], [1, 2, 3])).toThrow(/finite predictors, row 2/)
    expect(() => leastSquares([[1], [2], [3]], [1, 2, 3], { weights: [1, 0, 1] })).toThrow(/positive finite weights, row 1/)
  })
})
