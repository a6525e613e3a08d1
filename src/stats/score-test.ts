/**
 * @module stats/score-test
 * Rao's score test for adding terms to a fitted Poisson log-linear model: how much would the fit
 * improve, judged from the current fit alone, without refitting the larger model.
 */
import { chiSquareSurvival } from './chi-square-distribution.ts'
import { slabFloat64, slabFloat64Copy } from './typed-slab.ts'

export interface ScoreTestInput {
  /** column-major design of the fitted model, rows × cols */
  design: Float64Array
  rows: number
  cols: number
  /** the fitted model's means μ */
  fitted: ArrayLike<number>
  counts: ArrayLike<number>
  /** column-major extra columns to test, rows × extraCols */
  extra: Float64Array
  extraCols: number
  priorWeights?: ArrayLike<number>
  /** quasi-Poisson dispersion to divide by (default 1) */
  dispersion?: number
}

export interface ScoreTestResult {
  statistic: number
  degreesOfFreedom: number
  pValue: number
}

/** In-place Cholesky of a symmetric positive definite k × k matrix (row-major, lower triangle); false if not PD. */
function cholesky(matrix: Float64Array, k: number): boolean {
  for (let a = 0; a < k; a++) {
    for (let b = 0; b <= a; b++) {
      let sum = matrix[a * k + b]!
      for (let c = 0; c < b; c++) sum -= matrix[a * k + c]! * matrix[b * k + c]!
      if (a === b) {
        if (!(sum > 0)) return false
        matrix[a * k + a] = Math.sqrt(sum)
      } else matrix[a * k + b] = sum / matrix[b * k + b]!
    }
  }
  return true
}

/** Solve L Lᵀ x = b for a Cholesky factor L (row-major lower triangle); overwrites b. */
function choleskySolve(factor: Float64Array, k: number, vector: Float64Array): void {
  for (let a = 0; a < k; a++) {
    let value = vector[a]!
    for (let c = 0; c < a; c++) value -= factor[a * k + c]! * vector[c]!
    vector[a] = value / factor[a * k + a]!
  }
  for (let a = k - 1; a >= 0; a--) {
    let value = vector[a]!
    for (let c = a + 1; c < k; c++) value -= factor[c * k + a]! * vector[c]!
    vector[a] = value / factor[a * k + a]!
  }
}

/**
 * Score (Lagrange multiplier) statistic for adding columns Z to a Poisson GLM with log link, at the
 * fit of the smaller model: S = Uᵀ V⁻¹ U / φ with U = Zᵀ w (y − μ) and V = ZᵀWZ − ZᵀWX (XᵀWX)⁻¹ XᵀWZ,
 * W = diag(w μ). Under the smaller model S is approximately χ² with as many degrees of freedom as
 * added columns; it approximates the likelihood-ratio statistic, so it can screen candidate terms
 * before any of them is fitted.
 *
 * Reference: https://en.wikipedia.org/wiki/Score_test ; for a two-group Poisson comparison it equals
 * Pearson's X² of the 2-cell table (checked in the tests).
 * Cost: O(n (p + k)²).
 *
 * @example
 * ```ts
 * poissonScoreTest({ design, rows, cols, fitted: fit.fitted, counts, extra, extraCols: 2 }).statistic
 * ```
 */
export function poissonScoreTest(input: ScoreTestInput): ScoreTestResult {
  const { design, rows, cols, fitted, counts, extra, extraCols, priorWeights } = input
  const dispersion = input.dispersion ?? 1
  if (design.length !== rows * cols || extra.length !== rows * extraCols) throw new RangeError('poissonScoreTest requires designs of rows × columns values')
  const xx = slabFloat64(cols * cols)
  const xz = slabFloat64(cols * extraCols)
  const zz = slabFloat64(extraCols * extraCols)
  const score = slabFloat64(extraCols)
  for (let i = 0; i < rows; i++) {
    const prior = priorWeights ? priorWeights[i]! : 1
    if (prior === 0) continue
    const weight = prior * fitted[i]!
    const residual = prior * (counts[i]! - fitted[i]!)
    for (let a = 0; a < cols; a++) {
      const xa = design[a * rows + i]!
      if (xa === 0) continue
      for (let b = 0; b <= a; b++) xx[a * cols + b]! += weight * xa * design[b * rows + i]!
      for (let c = 0; c < extraCols; c++) xz[a * extraCols + c]! += weight * xa * extra[c * rows + i]!
    }
    for (let c = 0; c < extraCols; c++) {
      const zc = extra[c * rows + i]!
      score[c]! += zc * residual
      for (let d = 0; d <= c; d++) zz[c * extraCols + d]! += weight * zc * extra[d * rows + i]!
    }
  }
  if (!cholesky(xx, cols)) throw new RangeError('poissonScoreTest: the fitted model\'s information matrix is singular')
  // V = ZᵀWZ − (XᵀWZ)ᵀ (XᵀWX)⁻¹ (XᵀWZ), column by column
  const column = slabFloat64(cols)
  const solved = slabFloat64(cols * extraCols)
  for (let c = 0; c < extraCols; c++) {
    for (let a = 0; a < cols; a++) column[a] = xz[a * extraCols + c]!
    choleskySolve(xx, cols, column)
    for (let a = 0; a < cols; a++) solved[a * extraCols + c] = column[a]!
  }
  const v = slabFloat64(extraCols * extraCols)
  for (let c = 0; c < extraCols; c++) {
    for (let d = 0; d <= c; d++) {
      let value = zz[c * extraCols + d]!
      for (let a = 0; a < cols; a++) value -= xz[a * extraCols + c]! * solved[a * extraCols + d]!
      v[c * extraCols + d] = value
    }
  }
  if (!cholesky(v, extraCols)) return { statistic: 0, degreesOfFreedom: extraCols, pValue: 1 }
  const u = slabFloat64Copy(score)
  choleskySolve(v, extraCols, u)
  let statistic = 0
  for (let c = 0; c < extraCols; c++) statistic += score[c]! * u[c]!
  statistic /= dispersion
  return { statistic, degreesOfFreedom: extraCols, pValue: chiSquareSurvival(statistic, extraCols) }
}
