/**
 * @module curves/trend-model
 * The demand trend regression of one skill: a quasi-Poisson log-linear model of the monthly mention
 * counts of every used source (external postings, internal requests) stacked together, with
 * log(all documents) as offset, one intercept per source (their shares differ in level), one common
 * time slope, optional month-of-year terms and an optional change in slope at a breakpoint τ:
 *
 *   log E[n_s(t)] = log N_s(t) + a_s + β (t − t̄) + γ (t − τ)₊ + Σ_k [c_k sin(2πk m/12) + d_k cos(2πk m/12)]
 *
 * exp(β) is the monthly factor of the skill's share of documents. The sources share the trend and
 * each counts by its own information, so a thin internal series cannot drown a clear external
 * signal; the configured weights shape the combined index (see series.ts), whose fitted value is
 * S̄ Σ_s w_s ŝ_s(t)/s̄_s and therefore moves exactly with exp(β t). Months with N = 0 are left out
 * (missing); zero counts stay in (no logarithm of n is taken).
 */
import { poissonGlm, summarizeContrast } from '../stats/poisson-glm.ts'
import { studentTQuantile, studentTTwoSidedP } from '../stats/student-t-distribution.ts'
import type { CoefficientSummary, PoissonGlmFit } from '../stats/poisson-glm.ts'
import { monthOfYear } from './months.ts'
import type { SkillGrid } from './series.ts'
import { slabFloat64, slabFloat64Copy, slabInt32, slabInt32Copy } from '../stats/typed-slab.ts'

/** The observed (source, month) cells of a skill, stacked month by month. */
export interface StackedObservations {
  rows: number
  sourceCount: number
  /** index into grid.sources */
  source: Int32Array
  /** grid position (month), non-decreasing */
  position: Float64Array
  counts: Float64Array
  /** log N */
  logTotal: Float64Array
  /** month of year 0..11 */
  monthOfYear: Int32Array
  /** mean position, the centre of the time column */
  centre: number
}

export interface TrendSpec {
  /** number of Fourier pairs for the month of year (0 = none) */
  harmonics: number
  /** grid position after which the slope changes, or null */
  breakpoint: number | null
}

export interface TrendFit {
  spec: TrendSpec
  glm: PoissonGlmFit
  /** column names, for the details */
  columns: string[]
  /** column of the time slope, of the hinge (t − τ)₊ (or −1) */
  slopeColumn: number
  hingeColumn: number
  observations: StackedObservations
  /** the column-major design the model was fitted with (rows × columns; read-only) */
  design: Float64Array
}

/**
 * Stack a skill's observed cells, source by source within each month.
 *
 * @example
 * ```ts
 * stackObservations(grid).rows // => number of observed (source, month) cells
 * ```
 */
export function stackObservations(grid: SkillGrid): StackedObservations {
  const sourceCount = grid.sources.length
  let rows = 0
  for (let t = 0; t < grid.length; t++) for (let s = 0; s < sourceCount; s++) if (grid.sources[s]!.N[t]! > 0) rows++
  const source = slabInt32(rows)
  const position = slabFloat64(rows)
  const counts = slabFloat64(rows)
  const logTotal = slabFloat64(rows)
  const months = slabInt32(rows)
  let centre = 0
  let i = 0
  for (let t = 0; t < grid.length; t++) {
    for (let s = 0; s < sourceCount; s++) {
      const series = grid.sources[s]!
      if (!(series.N[t]! > 0)) continue
      source[i] = s
      position[i] = t
      counts[i] = series.n[t]!
      logTotal[i] = Math.log(series.N[t]!)
      months[i] = monthOfYear(grid.firstMonth + t)
      centre += t / rows
      i++
    }
  }
  return { rows, sourceCount: grid.sources.length, source, position, counts, logTotal, monthOfYear: months, centre }
}

/**
 * The observations from grid position `from` on (the months since a skill emerged), re-centred.
 *
 * @example
 * ```ts
 * observationsFrom(stackObservations(grid), 20).rows // => cells in months 20 and later
 * ```
 */
export function observationsFrom(observations: StackedObservations, from: number): StackedObservations {
  let first = 0
  while (first < observations.rows && observations.position[first]! < from) first++
  const position = slabFloat64Copy(observations.position, first)
  let centre = 0
  for (let i = 0; i < position.length; i++) centre += position[i]! / position.length
  return {
    rows: observations.rows - first,
    sourceCount: observations.sourceCount,
    source: slabInt32Copy(observations.source, first),
    position,
    counts: slabFloat64Copy(observations.counts, first),
    logTotal: slabFloat64Copy(observations.logTotal, first),
    monthOfYear: slabInt32Copy(observations.monthOfYear, first),
    centre,
  }
}

/**
 * The design row of one cell: source intercepts, centred month, hinge, harmonics.
 *
 * @example
 * ```ts
 * designRow({ harmonics: 0, breakpoint: 10 }, 2, 1, 12, 0, 6) // => [0, 1, 6, 2]
 * ```
 */
export function designRow(spec: TrendSpec, sourceCount: number, sourceIndex: number, position: number, month: number, centre: number): number[] {
  const row = new Array<number>(sourceCount).fill(0)
  row[sourceIndex] = 1
  row.push(position - centre)
  if (spec.breakpoint !== null) row.push(Math.max(0, position - spec.breakpoint))
  for (let k = 1; k <= spec.harmonics; k++) {
    const angle = (2 * Math.PI * k * month) / 12
    row.push(Math.sin(angle), Math.cos(angle))
  }
  return row
}

/**
 * designRow written into a reused array (same values; no allocation for the hot callers).
 *
 * @example
 * ```ts
 * designRowInto(new Float64Array(4), { harmonics: 0, breakpoint: 10 }, 2, 1, 12, 0, 6) // => [0, 1, 6, 2]
 * ```
 */
export function designRowInto(row: Float64Array, spec: TrendSpec, sourceCount: number, sourceIndex: number, position: number, month: number, centre: number): Float64Array {
  for (let s = 0; s < sourceCount; s++) row[s] = 0
  row[sourceIndex] = 1
  let j = sourceCount
  row[j++] = position - centre
  if (spec.breakpoint !== null) row[j++] = Math.max(0, position - spec.breakpoint)
  for (let k = 1; k <= spec.harmonics; k++) {
    const angle = (2 * Math.PI * k * month) / 12
    row[j++] = Math.sin(angle)
    row[j++] = Math.cos(angle)
  }
  return row
}

/** sin and cos of 2πk m/12 for k = 1..5 and m = 0..11, row k−1 (the design's month-of-year terms). */
const HARMONIC_TABLE = Array.from({ length: 5 }, (_, k) =>
  Array.from({ length: 12 }, (_, m) => [Math.sin((2 * Math.PI * (k + 1) * m) / 12), Math.cos((2 * Math.PI * (k + 1) * m) / 12)] as const),
)

/** Column-major design matrix and column names for a spec (the same values as designRow, row by row). */
export function buildDesign(observations: StackedObservations, spec: TrendSpec): { design: Float64Array; cols: number; columns: string[] } {
  const columns: string[] = []
  for (let s = 0; s < observations.sourceCount; s++) columns.push(`intercept${s}`)
  columns.push('month')
  if (spec.breakpoint !== null) columns.push('monthAfterBreak')
  for (let k = 1; k <= spec.harmonics; k++) columns.push(`sin${k}`, `cos${k}`)
  const cols = columns.length
  const rows = observations.rows
  const design = slabFloat64(rows * cols)
  const slope = observations.sourceCount
  for (let i = 0; i < rows; i++) {
    const position = observations.position[i]!
    design[observations.source[i]! * rows + i] = 1
    design[slope * rows + i] = position - observations.centre
    let j = slope + 1
    if (spec.breakpoint !== null) design[j++ * rows + i] = Math.max(0, position - spec.breakpoint)
    const month = observations.monthOfYear[i]!
    for (let k = 1; k <= spec.harmonics; k++) {
      // indexed reads: array destructuring would run the iterator protocol for every cell
      const pair = k <= 5 ? HARMONIC_TABLE[k - 1]![month]! : null
      design[j++ * rows + i] = pair ? pair[0] : Math.sin((2 * Math.PI * k * month) / 12)
      design[j++ * rows + i] = pair ? pair[1] : Math.cos((2 * Math.PI * k * month) / 12)
    }
  }
  return { design, cols, columns }
}

/**
 * Fit the trend regression for a spec by IRLS (Householder QR).
 *
 * @throws RankDeficientError when the spec cannot be estimated from these months (e.g. month-of-year
 *   terms with too few distinct months)
 * @example
 * ```ts
 * fitTrend(stackObservations(grid), { harmonics: 0, breakpoint: null }).glm.coefficients
 * ```
 */
export function fitTrend(observations: StackedObservations, spec: TrendSpec, start?: ArrayLike<number>): TrendFit {
  const { design, cols, columns } = buildDesign(observations, spec)
  const glm = poissonGlm({ design, rows: observations.rows, cols, counts: observations.counts, offset: observations.logTotal, start })
  const slopeColumn = observations.sourceCount
  return { spec, glm, columns, slopeColumn, hingeColumn: spec.breakpoint !== null ? slopeColumn + 1 : -1, observations, design }
}

/**
 * The current slope per month: after the breakpoint when there is one (β + γ), else β; quasi-Poisson
 * Wald summary with a t reference on the residual degrees of freedom.
 */
export function currentSlope(fit: TrendFit, level: number): CoefficientSummary {
  const contrast = new Array<number>(fit.columns.length).fill(0)
  contrast[fit.slopeColumn] = 1
  if (fit.hingeColumn >= 0) contrast[fit.hingeColumn] = 1
  return summarizeContrast(fit.glm, contrast, { quasi: true, level })
}

/**
 * The current slope after a breakpoint (β + γ) with its interval widened for the uncertainty of the
 * break's position. The breakpoint ψ is treated as a parameter like the others: the model is
 * linearised in ψ (the column ∂η/∂ψ = −γ̂ · 1(t > ψ) joins the design, as in Muggeo's segmented
 * regression) and the slope's variance is read from the inverse of the enlarged quasi-Poisson
 * information Xₐᵀ W Xₐ, with one residual degree of freedom less. Without this the interval treats
 * the chosen month as known and covers the true slope too rarely (about 70% at a nominal 95% in
 * the simulation of test/curves/change-coverage.test.ts).
 *
 * Reference: Muggeo (2003), Estimating regression models with unknown break-points, Statistics in
 * Medicine 22:3055–3071, §2–3 (the ψ column and the covariance of the full parameter vector; the
 * article is summarised in the R package segmented's vignette,
 * https://cran.r-project.org/package=segmented). Cost: O(n p²).
 *
 * @returns the ordinary current slope when there is no breakpoint or the enlarged information is
 *   singular (e.g. γ̂ = 0, where ψ is not identified)
 * @example
 * ```ts
 * currentSlopeWithBreak(changedFit, 0.95).upper // => at least currentSlope(changedFit, 0.95).upper
 * ```
 */
export function currentSlopeWithBreak(fit: TrendFit, level: number): CoefficientSummary {
  const plain = currentSlope(fit, level)
  if (fit.hingeColumn < 0 || fit.spec.breakpoint === null) return plain
  const obs = fit.observations
  const rows = obs.rows
  const cols = fit.columns.length
  const size = cols + 1
  const gamma = fit.glm.coefficients[fit.hingeColumn]!
  const residualDf = fit.glm.residualDf - 1
  if (!(residualDf > 0) || !(Math.abs(gamma) > 0)) return plain
  const mu = fit.glm.fitted
  const design = fit.design
  const breakpoint = fit.spec.breakpoint
  // information of the enlarged design (lower triangle), column `cols` is ∂η/∂ψ
  const information = slabFloat64(size * size)
  const row = new Float64Array(size)
  for (let i = 0; i < rows; i++) {
    for (let a = 0; a < cols; a++) row[a] = design[a * rows + i]!
    row[cols] = obs.position[i]! > breakpoint ? -gamma : 0
    const weight = mu[i]!
    for (let a = 0; a < size; a++) {
      const wa = weight * row[a]!
      if (wa === 0) continue
      for (let b = 0; b <= a; b++) information[a * size + b]! += wa * row[b]!
    }
  }
  // Cholesky, then solve for the contrast (slope + hinge); singular → the plain summary
  const chol = slabFloat64(size * size)
  for (let a = 0; a < size; a++) {
    for (let b = 0; b <= a; b++) {
      let sum = information[a * size + b]!
      for (let k = 0; k < b; k++) sum -= chol[a * size + k]! * chol[b * size + k]!
      if (a === b) {
        if (!(sum > 1e-12 * information[a * size + a]!)) return plain
        chol[a * size + a] = Math.sqrt(sum)
      } else chol[a * size + b] = sum / chol[b * size + b]!
    }
  }
  const z = new Float64Array(size)
  for (let a = 0; a < size; a++) {
    let value = a === fit.slopeColumn || a === fit.hingeColumn ? 1 : 0
    for (let k = 0; k < a; k++) value -= chol[a * size + k]! * z[k]!
    z[a] = value / chol[a * size + a]!
  }
  // c' A⁻¹ c = |L⁻¹ c|²
  let variance = 0
  for (let a = 0; a < size; a++) variance += z[a]! * z[a]!
  const dispersion = Number.isFinite(fit.glm.dispersion) && fit.glm.dispersion > 0 ? fit.glm.dispersion : 1
  const standardError = Math.sqrt(variance * dispersion)
  if (!(standardError >= plain.standardError) || !Number.isFinite(standardError)) return plain
  const statistic = plain.estimate / standardError
  const critical = studentTQuantile(0.5 + level / 2, residualDf)
  const pValue = studentTTwoSidedP(statistic, residualDf)
  return {
    estimate: plain.estimate,
    standardError,
    statistic,
    pValue: Number.isNaN(pValue) ? 1 : pValue,
    lower: plain.estimate - critical * standardError,
    upper: plain.estimate + critical * standardError,
  }
}

/**
 * Fitted combined index at every grid position (no variances): the curve drawn on the skill page.
 *
 * @example
 * ```ts
 * fittedIndex(fit, grid)[grid.length - 1] // => fitted index in the latest month
 * ```
 */
export function fittedIndex(fit: TrendFit, grid: SkillGrid): Float64Array {
  const values = slabFloat64(grid.length)
  const cols = fit.columns.length
  const beta = fit.glm.coefficients
  for (let t = 0; t < grid.length; t++) {
    const month = monthOfYear(grid.firstMonth + t)
    // the common part (trend, hinge, season) is the same for every source
    let common = beta[fit.slopeColumn]! * (t - fit.observations.centre)
    if (fit.hingeColumn >= 0) common += beta[fit.hingeColumn]! * Math.max(0, t - fit.spec.breakpoint!)
    for (let k = 1, j = fit.slopeColumn + (fit.hingeColumn >= 0 ? 2 : 1); k <= fit.spec.harmonics && j < cols; k++, j += 2) {
      const angle = (2 * Math.PI * k * month) / 12
      common += beta[j]! * Math.sin(angle) + beta[j + 1]! * Math.cos(angle)
    }
    let sum = 0
    for (let s = 0; s < grid.sources.length; s++) {
      const source = grid.sources[s]!
      sum += (source.weight * Math.exp(beta[s]! + common)) / source.level
    }
    values[t] = grid.combinedLevel * sum
  }
  return values
}

/** combinedAt's gradient, reused (it is called for every forecast month of every skill) */
let gradientScratch = new Float64Array(16)

export interface CombinedValue {
  /** fitted combined index on the share scale */
  share: number
  /** variance of its logarithm from the coefficients (delta method, quasi-Poisson scale) */
  logVariance: number
  /** each source's fitted share */
  sourceShares: number[]
}

/**
 * Fitted combined index at a grid position (past or future): I = S̄ Σ_s w_s ŝ_s/s̄_s with
 * ŝ_s = exp(x_s'θ), and Var(log I) = φ gᵀ(XᵀWX)⁻¹g with g = Σ_s π_s x_s, π_s the sources' parts.
 *
 * @example
 * ```ts
 * combinedAt(fit, grid, grid.length + 11).share // => index 12 months after the last month
 * ```
 */
export function combinedAt(fit: TrendFit, grid: SkillGrid, position: number): CombinedValue {
  const cols = fit.columns.length
  const sourceCount = fit.observations.sourceCount
  const beta = fit.glm.coefficients
  // every source's row is its intercept indicator plus the same time, hinge and season columns
  if (gradientScratch.length < cols) gradientScratch = new Float64Array(2 * cols)
  const gradient = designRowInto(gradientScratch, fit.spec, sourceCount, 0, position, monthOfYear(grid.firstMonth + position), fit.observations.centre)
  gradient[0] = 0
  let common = 0
  for (let j = sourceCount; j < cols; j++) common += gradient[j]! * beta[j]!
  const sourceShares = new Array<number>(sourceCount)
  let sum = 0
  for (let s = 0; s < sourceCount; s++) {
    const source = grid.sources[s]!
    const share = Math.exp(beta[s]! + common)
    sourceShares[s] = share
    const term = (source.weight * share) / source.level
    gradient[s] = term
    sum += term
  }
  // gradient of log I: the sources' parts π_s on their intercepts, 1 × the common columns
  for (let s = 0; s < sourceCount; s++) gradient[s] = gradient[s]! / sum
  let variance = 0
  for (let i = 0; i < cols; i++) {
    const gi = gradient[i]!
    for (let j = 0; j < cols; j++) variance += gi * gradient[j]! * fit.glm.unscaledCovariance[i * cols + j]!
  }
  const dispersion = Number.isFinite(fit.glm.dispersion) ? fit.glm.dispersion : 1
  return { share: grid.combinedLevel * sum, logVariance: Math.max(0, variance * dispersion), sourceShares }
}
