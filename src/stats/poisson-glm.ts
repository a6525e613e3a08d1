/**
 * @module stats/poisson-glm
 * Poisson generalized linear model with log link and offset, fitted by iteratively reweighted least
 * squares (IRLS), with the quasi-Poisson dispersion estimated from Pearson's chi-square.
 *
 * In skill-tides the response is the number of documents mentioning a skill in a month and the
 * offset is the log of all documents that month, so exp(β) multiplies the skill's share of demand.
 */
import { logGamma } from './log-gamma.ts'
import { qrDecomposeInPlace, qrSolveInPlace, qrUnscaledCovariance } from './householder-qr.ts'
import { normalQuantile, normalSurvival } from './normal-distribution.ts'
import { studentTQuantile, studentTTwoSidedP } from './student-t-distribution.ts'
import { slabFloat64 } from './typed-slab.ts'

export interface PoissonGlmInput {
  /** column-major design matrix, rows × cols (include the intercept column yourself) */
  design: Float64Array
  rows: number
  cols: number
  /** non-negative responses (counts; non-integers are accepted for weighted indices) */
  counts: ArrayLike<number>
  /** log exposure added to the linear predictor, e.g. log of all documents that month */
  offset?: ArrayLike<number>
  /** prior weights (>= 0); default 1 */
  priorWeights?: ArrayLike<number>
  /** starting coefficients (warm start), otherwise R's rule μ = y + 0.1 */
  start?: ArrayLike<number>
  /** default 25 (as R's glm.control, from memory) */
  maxIterations?: number
  /** relative deviance change for convergence; default 1e-8 (as R's glm.control, from memory) */
  tolerance?: number
}

export interface PoissonGlmFit {
  coefficients: Float64Array
  /** (XᵀWX)⁻¹, row-major cols × cols: the covariance when the dispersion is 1 */
  unscaledCovariance: Float64Array
  /** residual deviance 2 Σ w [y ln(y/μ) − (y − μ)] */
  deviance: number
  /** Pearson's X² = Σ w (y − μ)² / μ */
  pearsonChiSquare: number
  /** quasi-Poisson dispersion X² / (n − p) (NaN when n = p) */
  dispersion: number
  /** Poisson log-likelihood Σ w [y ln μ − μ − ln Γ(y + 1)] */
  logLikelihood: number
  /** Akaike information criterion −2 ln L + 2p */
  aic: number
  residualDf: number
  iterations: number
  converged: boolean
  fitted: Float64Array
  linearPredictor: Float64Array
}

export interface CoefficientSummary {
  estimate: number
  standardError: number
  /** z (dispersion 1) or t (quasi) statistic */
  statistic: number
  /** two-sided p-value */
  pValue: number
  lower: number
  upper: number
}

/** Raised when IRLS cannot produce a finite fit. */
export class GlmFitError extends Error {
  constructor(message: string) {
    super(message)
    this.name = 'GlmFitError'
  }
}

/** ln(y!) for small whole y from a table (the log-likelihood needs it for every row of every fit). */
const LOG_FACTORIAL_TABLE_SIZE = 4096
const logFactorialTable = new Float64Array(LOG_FACTORIAL_TABLE_SIZE)
for (let k = 2; k < LOG_FACTORIAL_TABLE_SIZE; k++) logFactorialTable[k] = logFactorialTable[k - 1]! + Math.log(k)

function logFactorial(y: number): number {
  return Number.isInteger(y) && y < LOG_FACTORIAL_TABLE_SIZE ? logFactorialTable[y]! : logGamma(y + 1)
}

/**
 * Σ w (y ln y − y), the part of the deviance that does not depend on the fit, so that each IRLS
 * step needs no logarithm: D = 2 [Σ w (y ln y − y) − Σ w (y η − μ)] with η = ln μ.
 */
function devianceConstant(counts: Float64Array, weights: Float64Array): number {
  let constant = 0
  for (let i = 0; i < counts.length; i++) {
    const y = counts[i]!
    if (y > 0) constant += weights[i]! * (y * Math.log(y) - y)
  }
  return constant
}

function devianceOf(counts: Float64Array, fitted: Float64Array, linearPredictor: Float64Array, weights: Float64Array, constant: number): number {
  let fitPart = 0
  for (let i = 0; i < fitted.length; i++) {
    const weight = weights[i]!
    if (weight === 0) continue
    fitPart += weight * (counts[i]! * linearPredictor[i]! - fitted[i]!)
  }
  // rounding can leave a tiny negative value for a perfect fit
  return Math.max(0, 2 * (constant - fitPart))
}

interface Workspace {
  counts: Float64Array
  offset: Float64Array
  weights: Float64Array
  design: Float64Array
  response: Float64Array
  diagonal: Float64Array
  candidate: Float64Array
  previous: Float64Array
}

let shared: Workspace | null = null
let sharedRows = 0
let sharedCols = 0

/** Work arrays of at least rows × cols, reused between fits (poissonGlm is not re-entrant). */
function workspace(rows: number, cols: number): Workspace {
  if (!shared || rows > sharedRows || cols > sharedCols) {
    sharedRows = Math.max(rows, sharedRows)
    sharedCols = Math.max(cols, sharedCols)
    shared = {
      counts: new Float64Array(sharedRows),
      offset: new Float64Array(sharedRows),
      weights: new Float64Array(sharedRows),
      design: new Float64Array(sharedRows * sharedCols),
      response: new Float64Array(sharedRows),
      diagonal: new Float64Array(sharedCols),
      candidate: new Float64Array(sharedCols),
      previous: new Float64Array(sharedCols),
    }
  }
  // views of the exact sizes, so that lengths and column strides match this fit
  return {
    counts: shared.counts.subarray(0, rows),
    offset: shared.offset.subarray(0, rows),
    weights: shared.weights.subarray(0, rows),
    design: shared.design.subarray(0, rows * cols),
    response: shared.response.subarray(0, rows),
    diagonal: shared.diagonal.subarray(0, cols),
    candidate: shared.candidate.subarray(0, cols).fill(0),
    previous: shared.previous.subarray(0, cols).fill(0),
  }
}

/**
 * Fit a Poisson GLM with log link: log E[y] = offset + Xβ, by IRLS (Fisher scoring).
 *
 * Each iteration solves the weighted least-squares problem √W X β ≈ √W z with working response
 * z = η − offset + (y − μ)/μ and weights W = w μ, by Householder QR (never the normal equations).
 * A step that makes the deviance non-finite or larger is halved, up to 20 times.
 *
 * Reference: McCullagh & Nelder, Generalized Linear Models, §2.5 (IRLS), summarised at
 * https://en.wikipedia.org/wiki/Generalized_linear_model#Fitting ; quasi-Poisson dispersion:
 * https://en.wikipedia.org/wiki/Quasi-likelihood
 * Cost: O(iterations · n p²).
 *
 * @throws RangeError on malformed input (negative counts, length mismatch)
 * @throws RankDeficientError when the weighted design loses rank
 * @throws GlmFitError when the fit cannot be made finite
 * @example
 * ```ts
 * // intercept-only with offset: exp(β0) = Σy / Σexposure
 * const fit = poissonGlm({ design: Float64Array.from([1, 1]), rows: 2, cols: 1, counts: [3, 5], offset: [Math.log(10), Math.log(30)] })
 * Math.exp(fit.coefficients[0]) // => 0.2
 * ```
 */
export function poissonGlm(input: PoissonGlmInput): PoissonGlmFit {
  const { design, rows, cols } = input
  const maxIterations = input.maxIterations ?? 25
  const tolerance = input.tolerance ?? 1e-8
  if (design.length !== rows * cols) throw new RangeError(`poissonGlm requires a ${rows} × ${cols} design, got ${design.length} values`)
  if (input.counts.length !== rows) throw new RangeError(`poissonGlm requires ${rows} counts, got ${input.counts.length}`)
  if (input.offset && input.offset.length !== rows) throw new RangeError(`poissonGlm requires ${rows} offsets, got ${input.offset.length}`)
  if (input.priorWeights && input.priorWeights.length !== rows) {
    throw new RangeError(`poissonGlm requires ${rows} weights, got ${input.priorWeights.length}`)
  }
  // dense copies keep the hot loops free of optional checks; they and the other work arrays come
  // from a reused workspace (a fit allocates only what it returns)
  const work = workspace(rows, cols)
  const counts = work.counts
  const offset = work.offset
  const priorWeights = work.weights
  for (let i = 0; i < rows; i++) {
    counts[i] = input.counts[i]!
    offset[i] = input.offset ? input.offset[i]! : 0
    priorWeights[i] = input.priorWeights ? input.priorWeights[i]! : 1
  }
  let activeRows = 0
  for (let i = 0; i < rows; i++) {
    const y = counts[i]!
    if (!(y >= 0) || !Number.isFinite(y)) throw new RangeError(`poissonGlm requires non-negative finite counts, row ${i} has ${y}`)
    const weight = priorWeights[i]!
    if (!(weight >= 0) || !Number.isFinite(weight)) throw new RangeError(`poissonGlm requires non-negative finite weights, row ${i} has ${weight}`)
    if (!Number.isFinite(offset[i]!)) throw new RangeError(`poissonGlm requires finite offsets, row ${i} has ${offset[i]}`)
    if (weight > 0) activeRows++
  }
  if (activeRows < cols) throw new RangeError(`poissonGlm requires at least ${cols} rows with positive weight, got ${activeRows}`)

  const linearPredictor = slabFloat64(rows)
  const fitted = slabFloat64(rows)
  const coefficients = slabFloat64(cols)
  const workingDesign = work.design
  const workingResponse = work.response
  const rDiagonal = work.diagonal
  const candidate = work.candidate
  const previous = work.previous

  const setPredictor = (beta: ArrayLike<number>): void => {
    for (let i = 0; i < rows; i++) {
      let eta = offset[i]!
      for (let j = 0; j < cols; j++) eta += design[j * rows + i]! * beta[j]!
      linearPredictor[i] = eta
      fitted[i] = Math.exp(eta)
    }
  }

  if (input.start) {
    if (input.start.length !== cols) throw new RangeError(`poissonGlm requires ${cols} starting values, got ${input.start.length}`)
    for (let j = 0; j < cols; j++) coefficients[j] = input.start[j]!
    setPredictor(coefficients)
  } else {
    for (let i = 0; i < rows; i++) {
      fitted[i] = counts[i]! + 0.1
      linearPredictor[i] = Math.log(fitted[i]!)
    }
  }
  const constant = devianceConstant(counts, priorWeights)
  let deviance = devianceOf(counts, fitted, linearPredictor, priorWeights, constant)
  let converged = false
  let iterations = 0
  for (iterations = 1; iterations <= maxIterations; iterations++) {
    for (let i = 0; i < rows; i++) {
      const mu = fitted[i]!
      const rootWeight = Math.sqrt(priorWeights[i]! * mu)
      const z = linearPredictor[i]! - offset[i]! + (counts[i]! - mu) / mu
      workingResponse[i] = rootWeight * z
      for (let j = 0; j < cols; j++) workingDesign[j * rows + i] = rootWeight * design[j * rows + i]!
    }
    qrDecomposeInPlace(workingDesign, rows, cols, rDiagonal)
    qrSolveInPlace(workingDesign, rows, cols, rDiagonal, workingResponse, candidate)
    const previousDeviance = deviance
    previous.set(coefficients)
    let accepted = false
    for (let halving = 0; halving <= 20; halving++) {
      setPredictor(candidate)
      deviance = devianceOf(counts, fitted, linearPredictor, priorWeights, constant)
      // the first iteration from the μ = y + 0.1 start has no coefficients to compare with
      if (Number.isFinite(deviance) && (iterations === 1 && !input.start ? true : deviance <= previousDeviance * (1 + 1e-10) + 1e-12)) {
        accepted = true
        break
      }
      for (let j = 0; j < cols; j++) candidate[j] = 0.5 * (candidate[j]! + previous[j]!)
    }
    if (!accepted) {
      if (!Number.isFinite(deviance)) throw new GlmFitError('poissonGlm could not find a finite fit (step halving failed)')
      setPredictor(previous)
      deviance = previousDeviance
      coefficients.set(previous)
      converged = true
      break
    }
    coefficients.set(candidate)
    if (Math.abs(deviance - previousDeviance) / (Math.abs(deviance) + 0.1) < tolerance) {
      converged = true
      break
    }
  }
  iterations = Math.min(iterations, maxIterations)

  // final weights at the solution, for the covariance and Pearson's statistic
  let pearsonChiSquare = 0
  let logLikelihood = 0
  for (let i = 0; i < rows; i++) {
    const mu = fitted[i]!
    const prior = priorWeights[i]!
    const rootWeight = Math.sqrt(prior * mu)
    for (let j = 0; j < cols; j++) workingDesign[j * rows + i] = rootWeight * design[j * rows + i]!
    const y = counts[i]!
    pearsonChiSquare += (prior * (y - mu) * (y - mu)) / mu
    if (prior > 0) logLikelihood += prior * (y * linearPredictor[i]! - mu - logFactorial(y))
  }
  qrDecomposeInPlace(workingDesign, rows, cols, rDiagonal)
  const unscaledCovariance = qrUnscaledCovariance({ rows, cols, packed: workingDesign, rDiagonal })
  const residualDf = activeRows - cols
  return {
    coefficients,
    unscaledCovariance,
    deviance,
    pearsonChiSquare,
    dispersion: residualDf > 0 ? pearsonChiSquare / residualDf : Number.NaN,
    logLikelihood,
    aic: -2 * logLikelihood + 2 * cols,
    residualDf,
    iterations,
    converged,
    fitted,
    linearPredictor,
  }
}

/**
 * Wald summary of one coefficient: estimate, standard error, test statistic, two-sided p-value and
 * confidence interval.
 *
 * With `quasi: true` the covariance is scaled by the Pearson dispersion and the reference
 * distribution is Student's t on the residual degrees of freedom (as R's summary.glm does for the
 * quasipoisson family, from memory); otherwise the dispersion is 1 and the reference is normal.
 *
 * @example
 * ```ts
 * summarizeCoefficient(fit, 1, { quasi: true, level: 0.95 }) // => { estimate, standardError, statistic, pValue, lower, upper }
 * ```
 */
export function summarizeCoefficient(
  fit: PoissonGlmFit,
  index: number,
  options: { quasi?: boolean; level?: number } = {},
): CoefficientSummary {
  const contrast = new Array<number>(fit.coefficients.length).fill(0)
  contrast[index] = 1
  return summarizeContrast(fit, contrast, options)
}

/**
 * Wald summary of a linear combination cᵀβ (for example the slope after a breakpoint, β₁ + β₂).
 *
 * @example
 * ```ts
 * summarizeContrast(fit, [0, 1, 1], { quasi: true }) // slope after the break
 * ```
 */
export function summarizeContrast(
  fit: PoissonGlmFit,
  contrast: readonly number[],
  options: { quasi?: boolean; level?: number } = {},
): CoefficientSummary {
  const cols = fit.coefficients.length
  if (contrast.length !== cols) throw new RangeError(`summarizeContrast requires ${cols} weights, got ${contrast.length}`)
  const level = options.level ?? 0.95
  if (!(level > 0 && level < 1)) throw new RangeError(`summarizeContrast requires a level in (0, 1), got ${level}`)
  const quasi = options.quasi ?? false
  let estimate = 0
  let variance = 0
  for (let i = 0; i < cols; i++) {
    estimate += contrast[i]! * fit.coefficients[i]!
    for (let j = 0; j < cols; j++) variance += contrast[i]! * contrast[j]! * fit.unscaledCovariance[i * cols + j]!
  }
  const useT = quasi && fit.residualDf > 0
  const scale = useT ? fit.dispersion : 1
  const standardError = Math.sqrt(Math.max(0, variance * scale))
  const statistic = estimate / standardError
  const pValue = useT ? studentTTwoSidedP(statistic, fit.residualDf) : Math.min(1, 2 * normalSurvival(Math.abs(statistic)))
  const critical = useT ? studentTQuantile(0.5 + level / 2, fit.residualDf) : normalQuantile(0.5 + level / 2)
  return {
    estimate,
    standardError,
    statistic,
    pValue: Number.isNaN(pValue) ? 1 : pValue,
    lower: estimate - critical * standardError,
    upper: estimate + critical * standardError,
  }
}

/**
 * Quasi-AIC for overdispersed counts: QAIC = −2 ln L / ĉ + 2(k + 1), where ĉ is the dispersion of
 * the largest candidate model and the extra parameter counts ĉ itself.
 *
 * An estimated ĉ below 1 is taken as 1 (underdispersion is not credited), as Burnham & Anderson advise.
 * Reference: Burnham & Anderson (2002), Model Selection and Multimodel Inference, §2.5 (from memory);
 * https://en.wikipedia.org/wiki/Quasi-likelihood#Model_selection (QAIC).
 * @example
 * ```ts
 * quasiAic(-100, 3, 2) // => 108
 * ```
 */
export function quasiAic(logLikelihood: number, parameterCount: number, dispersion: number): number {
  const cHat = Math.max(1, dispersion)
  return (-2 * logLikelihood) / cHat + 2 * (parameterCount + 1)
}
