/**
 * @module curves/forecast
 * Forecast of a skill's combined demand index (share scale) with 80% and 95% intervals, by whichever
 * of two methods had the lower rolling-origin one-step error on the skill's own recent months: the
 * trend regressions' extrapolation, or Holt's damped-trend exponential smoothing of the index.
 */
import { dampedHoltForecast, fitDampedHolt } from '../stats/damped-holt-fit.ts'
import type { DampedHoltFit } from '../stats/damped-holt-fit.ts'
import { dampedTrendForecast } from '../stats/exponential-smoothing.ts'
import { normalQuantile } from '../stats/normal-distribution.ts'
import { monthLabel, monthOfYear } from './months.ts'
import type { SkillGrid } from './series.ts'
import { combinedAt, designRowInto } from './trend-model.ts'
import type { TrendFit } from './trend-model.ts'

export type ForecastMethod = 'regression' | 'damped-holt'

export interface ForecastPoint {
  month: string
  monthsAhead: number
  share: number
  lo80: number
  hi80: number
  lo95: number
  hi95: number
  /** the 95% band again under the names the plan stage reads (low = lo95, high = hi95) */
  low: number
  high: number
}

/**
 * A forecast as columns, months ahead 1..length: point objects are made only when asked for
 * ({@link ForecastBands.points}, and JSON). Making 12 objects of boxed doubles for every skill was
 * about 0.3 s of a fit of 20,000 skills (profile); the stored curve takes the columns as they are
 * (curves/stored-series.ts).
 */
export class ForecastBands {
  private made: ForecastPoint[] | null = null

  /** `firstMonth`: month index (curves/months.ts) of the first month ahead */
  constructor(
    readonly firstMonth: number,
    readonly share: number[],
    readonly lo80: number[],
    readonly hi80: number[],
    readonly lo95: number[],
    readonly hi95: number[],
  ) {}

  static empty(firstMonth: number): ForecastBands {
    return new ForecastBands(firstMonth, [], [], [], [], [])
  }

  get length(): number {
    return this.share.length
  }

  /** The first `n` months ahead. */
  first(n: number): ForecastBands {
    if (n >= this.length) return this
    const cut = (x: number[]) => x.slice(0, n)
    return new ForecastBands(this.firstMonth, cut(this.share), cut(this.lo80), cut(this.hi80), cut(this.lo95), cut(this.hi95))
  }

  /** The points, made once: { month, monthsAhead, share, lo80, hi80, lo95, hi95, low, high }. */
  points(): ForecastPoint[] {
    this.made ??= Array.from({ length: this.length }, (_, h) => ({
      month: monthLabel(this.firstMonth + h),
      monthsAhead: h + 1,
      share: this.share[h]!,
      lo80: this.lo80[h]!,
      hi80: this.hi80[h]!,
      lo95: this.lo95[h]!,
      hi95: this.hi95[h]!,
      low: this.lo95[h]!,
      high: this.hi95[h]!,
    }))
    return this.made
  }

  toJSON(): ForecastPoint[] {
    return this.points()
  }
}

/**
 * Columns for `steps` months ahead of the grid's last month: plain arrays of doubles (unboxed, on
 * V8's heap). As 5 Float64Arrays a skill, each with its own off-heap store, the fit of 20,000
 * skills took 2 s longer (measured): their allocation and garbage collection.
 */
function emptyBands(grid: SkillGrid, steps: number): ForecastBands {
  const column = () => new Array<number>(steps).fill(0)
  return new ForecastBands(grid.firstMonth + grid.length, column(), column(), column(), column(), column())
}

export interface ForecastResult {
  method: ForecastMethod
  bands: ForecastBands
  /** the chosen method's point forecast 12 months ahead */
  share12: number
  /** mean squared one-step error on the share scale per method (null when it could not be computed) */
  oneStepMse: Record<ForecastMethod, number | null>
  /** number of rolling origins compared */
  origins: number
  /** the other method's 12-month point forecast, for the details */
  alternative12: number | null
  holt: { alpha: number; beta: number; phi: number } | null
}

const Z80 = normalQuantile(0.9)
const Z95 = normalQuantile(0.975)

/**
 * Regression forecast h = 1..steps months after the grid's last month: the fitted combined index,
 * with a log-normal interval whose log-variance adds the coefficients' uncertainty (delta method)
 * and one month's sampling noise of the observed index, Σ_s (S̄ w_s/s̄_s)² φ_s ŝ_s/N̄_s, with N̄_s the
 * source's mean monthly documents over its latest 12 observed months.
 */
function regressionForecast(grid: SkillGrid, trend: TrendFit, steps: number): ForecastBands {
  const last = grid.length - 1
  const dispersion = Number.isFinite(trend.glm.dispersion) ? trend.glm.dispersion : 1
  const recentTotals = grid.sources.map((source) => {
    const totals: number[] = []
    for (let t = last; t >= 0 && totals.length < 12; t--) if (source.N[t]! > 0) totals.push(source.N[t]!)
    return totals.reduce((a, b) => a + b, 0) / Math.max(1, totals.length)
  })
  const bands = emptyBands(grid, steps)
  for (let h = 1; h <= steps; h++) {
    const position = last + h
    const value = combinedAt(trend, grid, position)
    let noise = 0
    for (let s = 0; s < grid.sources.length; s++) {
      const source = grid.sources[s]!
      const scale = (grid.combinedLevel * source.weight) / source.level
      noise += (scale * scale * dispersion * value.sourceShares[s]!) / Math.max(1, recentTotals[s]!)
    }
    const sd = Math.sqrt(value.logVariance + noise / (value.share * value.share))
    const at = h - 1
    bands.share[at] = value.share
    bands.lo80[at] = value.share * Math.exp(-Z80 * sd)
    bands.hi80[at] = value.share * Math.exp(Z80 * sd)
    bands.lo95[at] = value.share * Math.exp(-Z95 * sd)
    bands.hi95[at] = value.share * Math.exp(Z95 * sd)
  }
  return bands
}

function holtForecast(grid: SkillGrid, holt: DampedHoltFit, steps: number): ForecastBands {
  const band = dampedHoltForecast(holt, steps, [0.8, 0.95])
  const inner = band.intervals['0.8']!
  const outer = band.intervals['0.95']!
  const bands = emptyBands(grid, band.mean.length)
  // shares cannot go below zero; the additive-error intervals are cut there
  for (let h = 0; h < band.mean.length; h++) {
    bands.share[h] = Math.max(0, band.mean[h]!)
    bands.lo80[h] = Math.max(0, inner.lower[h]!)
    bands.hi80[h] = Math.max(0, inner.upper[h]!)
    bands.lo95[h] = Math.max(0, outer.lower[h]!)
    bands.hi95[h] = Math.max(0, outer.upper[h]!)
  }
  return bands
}

/**
 * Rolling-origin one-step errors: for each of the last `origins` months j where the index is
 * observed (with at least `minTrain` observed months before), each method predicts the index of
 * month j from earlier months only.
 *
 * The regression at origin j is the one-step estimator from the full fit: one Newton (Fisher
 * scoring) step β_j = β + H_j⁻¹ G_j with G_j = Σ_{t<j} x_t (y_t − μ_t) and H_j = Σ_{t<j} μ_t x_t x_tᵀ
 * at the full-data fit. It agrees with refitting on the months before j up to second-order terms
 * (Lehmann & Casella, Theory of Point Estimation, §6.4, from memory), and because the months are
 * sorted, G_j and H_j for all origins come from one pass. A breakpoint stays where the full data put
 * it; its hinge is left out while fewer than 3 months lie after it.
 *
 * Holt's smoothing parameters are estimated once on all months and its states run forward, so each
 * prediction uses only earlier months' values but its three parameters have seen the whole series.
 * Both methods thus borrow a little from the future; stated here rather than hidden.
 */
function rollingOrigin(grid: SkillGrid, trend: TrendFit, holt: DampedHoltFit | null, origins: number, minTrain: number) {
  // the origins: the last `origins` observed months with at least `minTrain` observed months before
  let observedCount = 0
  for (let t = 0; t < grid.length; t++) if (!Number.isNaN(grid.combined[t]!)) observedCount++
  const skipObserved = Math.max(minTrain, observedCount - origins)
  const obs = trend.observations
  const cols = trend.columns.length
  const beta = trend.glm.coefficients
  const mu = trend.glm.fitted
  const design = trend.design
  // work arrays reused across skills (zeroed here; a run computes this once per skill)
  const work = rollingWork(cols, obs.sourceCount)
  const x = work.x
  const coefficients = work.coefficients
  const gradient = work.gradient
  const hessian = work.hessian
  const seen = work.seen
  const system = work.system
  const step = work.step
  const active = work.active
  const originRow = work.originRow
  let afterBreak = 0
  let row = 0
  let regressionSse = 0
  let holtSse = 0
  let count = 0
  let observedIndex = -1
  for (let origin = 0; origin < grid.length; origin++) {
    if (Number.isNaN(grid.combined[origin]!)) continue
    if (++observedIndex < skipObserved) continue
    for (; row < obs.rows && obs.position[row]! < origin; row++) {
      for (let a = 0; a < cols; a++) x[a] = design[a * obs.rows + row]!
      const residual = obs.counts[row]! - mu[row]!
      for (let a = 0; a < cols; a++) {
        if (x[a] === 0) continue
        gradient[a]! += x[a]! * residual
        for (let b = 0; b <= a; b++) hessian[a * cols + b]! += mu[row]! * x[a]! * x[b]!
      }
      seen[obs.source[row]!]!++
      if (trend.spec.breakpoint !== null && obs.position[row]! > trend.spec.breakpoint) afterBreak++
    }
    let thin = false
    for (let s = 0; s < obs.sourceCount; s++) if (seen[s]! < cols) thin = true
    if (thin) continue
    let p = 0
    for (let a = 0; a < cols; a++) if (a !== trend.hingeColumn || afterBreak >= 3 * obs.sourceCount) active[p++] = a
    // Cholesky of the active block, then solve for the step
    let singular = false
    for (let a = 0; a < p && !singular; a++) {
      for (let b = 0; b <= a; b++) {
        const ia = active[a]!
        const ib = active[b]!
        let sum = hessian[ia * cols + ib]!
        for (let k = 0; k < b; k++) sum -= system[a * cols + k]! * system[b * cols + k]!
        if (a === b) {
          if (!(sum > 0)) {
            singular = true
            break
          }
          system[a * cols + a] = Math.sqrt(sum)
        } else system[a * cols + b] = sum / system[b * cols + b]!
      }
    }
    if (singular) continue
    for (let a = 0; a < p; a++) {
      let value = gradient[active[a]!]!
      for (let k = 0; k < a; k++) value -= system[a * cols + k]! * step[k]!
      step[a] = value / system[a * cols + a]!
    }
    for (let a = p - 1; a >= 0; a--) {
      let value = step[a]!
      for (let k = a + 1; k < p; k++) value -= system[k * cols + a]! * step[k]!
      step[a] = value / system[a * cols + a]!
    }
    coefficients.fill(0)
    for (let a = 0; a < p; a++) coefficients[active[a]!] = beta[active[a]!]! + step[a]!
    const month = monthOfYear(grid.firstMonth + origin)
    let predicted = 0
    for (let s = 0; s < grid.sources.length; s++) {
      const source = grid.sources[s]!
      designRowInto(originRow, trend.spec, obs.sourceCount, s, origin, month, obs.centre)
      let eta = 0
      for (let j = 0; j < cols; j++) eta += originRow[j]! * coefficients[j]!
      predicted += (grid.combinedLevel * source.weight * Math.exp(eta)) / source.level
    }
    const actual = grid.combined[origin]!
    regressionSse += (actual - predicted) ** 2
    if (holt) holtSse += (actual - holt.run.oneStep[origin]!) ** 2
    count++
  }
  return {
    origins: count,
    regression: count > 0 ? regressionSse / count : null,
    dampedHolt: count > 0 && holt ? holtSse / count : null,
  }
}

interface RollingWork {
  cols: number
  sources: number
  x: Float64Array
  coefficients: Float64Array
  gradient: Float64Array
  hessian: Float64Array
  system: Float64Array
  step: Float64Array
  originRow: Float64Array
  seen: Int32Array
  active: Int32Array
}
let rollingScratch: RollingWork | null = null

/** rollingOrigin's work arrays for `cols` coefficients and `sources` sources, zeroed. */
function rollingWork(cols: number, sources: number): RollingWork {
  let work = rollingScratch
  if (!work || work.cols !== cols || work.sources !== sources) {
    work = {
      cols,
      sources,
      x: new Float64Array(cols),
      coefficients: new Float64Array(cols),
      gradient: new Float64Array(cols),
      hessian: new Float64Array(cols * cols),
      system: new Float64Array(cols * cols),
      step: new Float64Array(cols),
      originRow: new Float64Array(cols),
      seen: new Int32Array(sources),
      active: new Int32Array(cols),
    }
    rollingScratch = work
    return work
  }
  // system, step, coefficients, x, originRow and active are written before they are read
  work.gradient.fill(0)
  work.hessian.fill(0)
  work.seen.fill(0)
  return work
}

/**
 * Forecast a skill's combined index `horizon` months ahead (at least 12 are computed, so the
 * 12-month figure always exists), with the method of lower rolling-origin one-step mean squared
 * error; the regression wins ties and cases where Holt cannot be fitted.
 *
 * @example
 * ```ts
 * forecastSkill(grid, trend, { horizon: 12, origins: 12, minTrain: 12 }).method // => 'regression' or 'damped-holt'
 * ```
 */
export function forecastSkill(grid: SkillGrid, trend: TrendFit, options: { horizon: number; origins: number; minTrain: number }): ForecastResult {
  const steps = Math.max(12, options.horizon)
  let holt: DampedHoltFit | null = null
  try {
    // 60 evaluations: the forecasts do not change visibly beyond that (see bench/fit.ts). Measured on
    // 1,000 bench series: the simplex always stops at this cap (converging takes a median of 106
    // evaluations), so the parameters are those of a truncated search, not of its tolerance
    holt = fitDampedHolt(grid.combined, { maxEvaluations: 60 })
  } catch {
    holt = null
  }
  const errors = rollingOrigin(grid, trend, holt, options.origins, options.minTrain)
  const useHolt = holt !== null && errors.dampedHolt !== null && errors.regression !== null && errors.dampedHolt < errors.regression
  // the chosen method's bands; of the other, only its 12-month point is reported
  const chosen = useHolt ? holtForecast(grid, holt!, steps) : regressionForecast(grid, trend, steps)
  const alternative12 = useHolt
    ? combinedAt(trend, grid, grid.length + 11).share
    : holt
      ? Math.max(0, dampedTrendForecast(holt.run.level, holt.run.trend, holt.phi, 12)[11]!)
      : null
  return {
    method: useHolt ? 'damped-holt' : 'regression',
    bands: chosen.first(options.horizon),
    share12: chosen.share[11]!,
    oneStepMse: { regression: errors.regression, 'damped-holt': errors.dampedHolt },
    origins: errors.origins,
    alternative12,
    holt: holt ? { alpha: holt.alpha, beta: holt.beta, phi: holt.phi } : null,
  }
}
