import { describe, it, expect } from 'vitest'
import { dampedTrendForecast, forecastVarianceMultipliers, smoothSeries } from '../../src/stats/exponential-smoothing.ts'
import { seededRandom } from './seeded-random.ts'

describe('smoothSeries', () => {
  it('reproduces the trend-adjusted smoothing table (Heizer & Render, Table 4.1; CHECKS.md §4c)', () => {
    // Values [M] for the book, recomputed exactly [C]. Book notation F_t = ℓ_{t−1}, T_t = b_{t−1},
    // FIT_t = ℓ_{t−1} + b_{t−1}; α = 0.2, β = 0.4, F₁ = 11, T₁ = 2.
    const demand = [12, 17, 20, 19, 24, 21, 31, 28, 36]
    const run = smoothSeries(demand, { alpha: 0.2, beta: 0.4, phi: 1, level0: 11, trend0: 2 })
    const bookF = [12.8, 15.18, 17.82, 19.91, 22.51, 24.11, 27.14, 29.28, 32.48]
    const bookT = [1.92, 2.1, 2.32, 2.23, 2.38, 2.07, 2.45, 2.32, 2.68]
    const bookFit = [13.0, 14.72, 17.28, 20.14, 22.14, 24.89, 26.18, 29.59, 31.6]
    bookF.forEach((value, i) => expect(run.levels[i]).toBeCloseTo(value, 2))
    bookT.forEach((value, i) => expect(run.trends[i]).toBeCloseTo(value, 2))
    bookFit.forEach((value, i) => expect(run.oneStep[i]).toBeCloseTo(value, 2))
    expect(run.level + run.trend).toBeCloseTo(35.16, 2) // FIT for period 10
  })

  it('reproduces the SES course example, α = 0.3 (wongsteve.com page; CHECKS.md §4e)', () => {
    // [S] page values, recomputed [C]: forecasts for periods 2–10, MSE 365.80, period 11 = 65.43
    const sales = [99, 88, 50, 58, 62, 60, 55, 62, 71, 65]
    const run = smoothSeries(sales, { alpha: 0.3, level0: 99 })
    const expected = [99.0, 95.7, 82.0, 74.8, 71.0, 67.7, 63.9, 63.3, 65.6]
    expected.forEach((value, i) => expect(run.oneStep[i + 1]).toBeCloseTo(value, 1))
    expect(run.sse / 9).toBeCloseTo(365.8, 2)
    expect(run.level).toBeCloseTo(65.43, 2)
    const errors = Array.from(run.errors).slice(1)
    expect(errors.reduce((a, b) => a + b, 0) / 9).toBeCloseTo(-12.43, 2) // bias
    expect(errors.reduce((a, b) => a + Math.abs(b), 0) / 9).toBeCloseTo(14.14, 2) // MAD
  })

  it('reproduces double exponential smoothing on the NIST e-Handbook §6.4.3.3 data (CHECKS.md §4d)', () => {
    // data [S]; α = 0.3623, γ = 1 [M]; S₁ = y₁, b₁ = 0.8: one-step MSE 3.674, forecasts 25.77, 28.73, 31.69 [C]
    const data = [6.4, 5.6, 7.8, 8.8, 11.0, 11.6, 16.7, 15.3, 21.6, 22.4]
    const run = smoothSeries(data.slice(1), { alpha: 0.3623, beta: 1, phi: 1, level0: 6.4, trend0: 0.8 })
    expect(run.sse / 9).toBeCloseTo(3.674, 3)
    const forecasts = dampedTrendForecast(run.level, run.trend, 1, 3)
    expect(forecasts[0]).toBeCloseTo(25.77, 2)
    expect(forecasts[1]).toBeCloseTo(28.73, 2)
    expect(forecasts[2]).toBeCloseTo(31.69, 2)
  })

  it('carries the state through missing values without a correction', () => {
    const run = smoothSeries([10, Number.NaN, 14], { alpha: 0.5, beta: 0.5, phi: 0.9, level0: 10, trend0: 1 })
    expect(Number.isNaN(run.errors[1]!)).toBe(true)
    expect(run.observed).toBe(2)
    // after y₁: forecast 10.9, error −0.9, level 10.45, trend 0.9 − 0.225 = 0.675; missing: level 11.0575
    expect(run.levels[1]).toBeCloseTo(10.45 + 0.9 * 0.675, 12)
    expect(run.trends[1]).toBeCloseTo(0.9 * 0.675, 12)
  })

  it('rejects parameters outside their ranges', () => {
    expect(() => smoothSeries([1, 2], { alpha: 1.5, level0: 1 })).toThrow(/alpha/)
    expect(() => smoothSeries([1, 2], { alpha: 0.5, phi: 0, level0: 1 })).toThrow(/phi/)
    expect(() => smoothSeries([1, 2], { alpha: 0.5, level0: Number.NaN })).toThrow(/initial/)
  })
})

describe('dampedTrendForecast', () => {
  it('follows FPP3’s damped formula ŷ = ℓ + (φ + … + φ^h) b (CHECKS.md §4f [C])', () => {
    const forecasts = dampedTrendForecast(24.6, 0.4, 0.9, 5)
    const expected = [24.96, 25.284, 25.5756, 25.838, 26.0742]
    expected.forEach((value, i) => expect(forecasts[i]).toBeCloseTo(value, 4))
    // limit ℓ + φb/(1 − φ) = 28.2
    expect(dampedTrendForecast(24.6, 0.4, 0.9, 400)[399]).toBeCloseTo(28.2, 10)
  })
})

describe('forecastVarianceMultipliers', () => {
  it('matches FPP3 Table 8.8 closed forms for SES and Holt (from memory [M])', () => {
    // SES: 1 + α²(h − 1); Holt: 1 + (h − 1)[α² + αβh + β²h(2h − 1)/6] with β = αβ*
    const ses = forecastVarianceMultipliers(0.4, 0, 1, 12)
    ses.forEach((value, i) => expect(value).toBeCloseTo(1 + 0.16 * i, 12))
    const alpha = 0.6
    const betaStar = 0.25
    const beta = alpha * betaStar
    const holt = forecastVarianceMultipliers(alpha, betaStar, 1, 12)
    holt.forEach((value, i) => {
      const h = i + 1
      expect(value).toBeCloseTo(1 + (h - 1) * (alpha ** 2 + alpha * beta * h + (beta ** 2 * h * (2 * h - 1)) / 6), 10)
    })
  })

  it('matches the damped-trend closed form of Hyndman et al. (2008) Table 6.1 (from memory [M])', () => {
    const alpha = 0.5
    const betaStar = 0.3
    const phi = 0.9
    const beta = alpha * betaStar
    const multipliers = forecastVarianceMultipliers(alpha, betaStar, phi, 15)
    multipliers.forEach((value, i) => {
      const h = i + 1
      const closed =
        1 +
        alpha ** 2 * (h - 1) +
        ((beta * phi * h) / (1 - phi) ** 2) * (2 * alpha * (1 - phi) + beta * phi) -
        ((beta * phi * (1 - phi ** h)) / ((1 - phi) ** 2 * (1 - phi ** 2))) * (2 * alpha * (1 - phi ** 2) + beta * phi * (1 + 2 * phi - phi ** h))
      expect(value).toBeCloseTo(closed, 10)
    })
  })

  it('matches the spread of simulated ETS(A,Ad,N) futures (Monte Carlo, seeded)', () => {
    const random = seededRandom(99)
    const [alpha, betaStar, phi, sigma] = [0.4, 0.5, 0.85, 2]
    const horizon = 8
    const sums = new Array<number>(horizon).fill(0)
    const runs = 40000
    for (let r = 0; r < runs; r++) {
      let level = 0
      let trend = 0
      for (let h = 0; h < horizon; h++) {
        const error = sigma * random.normal()
        const forecastFromOrigin = dampedTrendForecast(0, 0, phi, h + 1)[h]! // 0: origin state is zero
        const y = level + phi * trend + error
        sums[h]! += (y - forecastFromOrigin) ** 2
        level = level + phi * trend + alpha * error
        trend = phi * trend + alpha * betaStar * error
      }
    }
    const multipliers = forecastVarianceMultipliers(alpha, betaStar, phi, horizon)
    sums.forEach((sum, h) => expect(sum / runs / sigma ** 2 / multipliers[h]!).toBeCloseTo(1, 1))
  })
})
