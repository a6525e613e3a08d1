/**
 * @module stats/exponential-smoothing
 * Exponential smoothing recursions: simple (level only), Holt's linear trend and Holt's damped
 * trend, in the error-correction form of the ETS(A,N,N)/(A,A,N)/(A,Ad,N) state-space models.
 * Parameter estimation lives in damped-holt-fit.ts; this file only runs the filter.
 */
import { slabFloat64 } from './typed-slab.ts'

export interface SmoothingParameters {
  /** level smoothing α in [0, 1] */
  alpha: number
  /** trend smoothing β* in [0, 1] (Holt's form; the ETS β is α·β*); 0 for simple smoothing */
  beta?: number
  /** damping φ in (0, 1]; 1 for Holt's undamped linear trend */
  phi?: number
  /** level before the first observation, ℓ₀ */
  level0: number
  /** trend before the first observation, b₀ (0 for simple smoothing) */
  trend0?: number
}

export interface SmoothingRun {
  /** one-step forecasts ŷ_{t|t−1} = ℓ_{t−1} + φ b_{t−1} */
  oneStep: Float64Array
  /** one-step errors y_t − ŷ_{t|t−1} (NaN where y is missing) */
  errors: Float64Array
  /** level and trend after each observation */
  levels: Float64Array
  trends: Float64Array
  /** final state */
  level: number
  trend: number
  /** Σ e_t² over observed values */
  sse: number
  /** number of observed (non-NaN) values */
  observed: number
}

/**
 * Run Holt's damped-trend exponential smoothing over a series (NaN = missing month: the state is
 * carried forward by the forecast, no correction).
 *
 * ŷ_t = ℓ_{t−1} + φ b_{t−1};  e_t = y_t − ŷ_t;  ℓ_t = ℓ_{t−1} + φ b_{t−1} + α e_t;
 * b_t = φ b_{t−1} + α β* e_t. With β* = 0 and b₀ = 0 this is simple exponential smoothing; with
 * φ = 1 it is Holt's linear method, equivalent to ℓ_t = α y_t + (1−α)(ℓ_{t−1}+b_{t−1}),
 * b_t = β*(ℓ_t − ℓ_{t−1}) + (1−β*) b_{t−1}.
 *
 * Reference: Hyndman & Athanasopoulos, Forecasting: Principles and Practice (3rd ed.), §8.1–8.2
 * (https://otexts.com/fpp3/holt.html).
 * Cost: O(n).
 *
 * @example
 * ```ts
 * // FPP3-style SES, α = 0.3, ℓ₀ = y₁ (CHECKS.md §4e): the next forecast is 65.43
 * smoothSeries([99, 88, 50, 58, 62, 60, 55, 62, 71, 65], { alpha: 0.3, level0: 99 }).level // => 65.43...
 * ```
 */
export function smoothSeries(values: ArrayLike<number>, parameters: SmoothingParameters): SmoothingRun {
  const { alpha, level0 } = parameters
  const beta = parameters.beta ?? 0
  const phi = parameters.phi ?? 1
  const trend0 = parameters.trend0 ?? 0
  if (!(alpha >= 0 && alpha <= 1)) throw new RangeError(`smoothSeries requires alpha in [0, 1], got ${alpha}`)
  if (!(beta >= 0 && beta <= 1)) throw new RangeError(`smoothSeries requires beta in [0, 1], got ${beta}`)
  if (!(phi > 0 && phi <= 1)) throw new RangeError(`smoothSeries requires phi in (0, 1], got ${phi}`)
  if (!Number.isFinite(level0) || !Number.isFinite(trend0)) throw new RangeError('smoothSeries requires finite initial states')
  const n = values.length
  const oneStep = slabFloat64(n)
  const errors = slabFloat64(n)
  const levels = slabFloat64(n)
  const trends = slabFloat64(n)
  let level = level0
  let trend = trend0
  let sse = 0
  let observed = 0
  const trendGain = alpha * beta
  for (let t = 0; t < n; t++) {
    const forecast = level + phi * trend
    oneStep[t] = forecast
    const y = values[t]!
    if (Number.isNaN(y)) {
      errors[t] = Number.NaN
      level = forecast
      trend = phi * trend
    } else {
      const error = y - forecast
      errors[t] = error
      sse += error * error
      observed++
      level = forecast + alpha * error
      trend = phi * trend + trendGain * error
    }
    levels[t] = level
    trends[t] = trend
  }
  return { oneStep, errors, levels, trends, level, trend, sse, observed }
}

/**
 * Damped-trend point forecasts ŷ_{T+h} = ℓ_T + (φ + φ² + … + φ^h) b_T for h = 1..horizon.
 *
 * As h grows the forecast levels off at ℓ_T + φ b_T/(1 − φ) (for φ < 1), which is why damped trends
 * forecast long horizons better than a straight line.
 * Reference: FPP3 §8.2, damped trend methods (https://otexts.com/fpp3/holt.html).
 * Cost: O(horizon).
 *
 * @example
 * ```ts
 * dampedTrendForecast(24.6, 0.4, 0.9, 2) // => [24.96, 25.284] (CHECKS.md §4f)
 * ```
 */
export function dampedTrendForecast(level: number, trend: number, phi: number, horizon: number): number[] {
  if (!(phi > 0 && phi <= 1)) throw new RangeError(`dampedTrendForecast requires phi in (0, 1], got ${phi}`)
  if (!(Number.isInteger(horizon) && horizon >= 0)) throw new RangeError(`dampedTrendForecast requires a whole horizon, got ${horizon}`)
  const forecasts: number[] = []
  let dampingSum = 0
  let power = 1
  for (let h = 1; h <= horizon; h++) {
    power *= phi
    dampingSum += power
    forecasts.push(level + dampingSum * trend)
  }
  return forecasts
}

/**
 * Forecast variance multipliers for ETS(A,Ad,N): Var(y_{T+h} − ŷ_{T+h}) = σ² (1 + Σ_{j=1}^{h−1} c_j²)
 * with c_j = α + αβ*(φ + … + φ^j). Derived from the state-space form (each future error enters
 * later forecasts through the level and the damped trend); equals the closed forms of Hyndman et al.
 * (2008, Table 6.1) and FPP3 Table 8.8 (checked in the tests).
 *
 * Reference: https://otexts.com/fpp3/ets-forecasting.html (prediction intervals).
 * Cost: O(horizon).
 *
 * @returns multipliers m_h for h = 1..horizon (so the variance is σ² m_h)
 * @example
 * ```ts
 * forecastVarianceMultipliers(0.5, 0, 1, 3) // => [1, 1.25, 1.5] (SES: 1 + (h−1)α²)
 * ```
 */
export function forecastVarianceMultipliers(alpha: number, beta: number, phi: number, horizon: number): number[] {
  const multipliers: number[] = []
  let total = 1
  let dampingSum = 0
  let power = 1
  for (let h = 1; h <= horizon; h++) {
    multipliers.push(total)
    // add c_h for the next horizon
    power *= phi
    dampingSum += power
    const c = alpha + alpha * beta * dampingSum
    total += c * c
  }
  return multipliers
}
