/**
 * @module stats/householder-qr
 * QR decomposition by Householder reflections, the numerically stable way to solve (weighted)
 * least-squares problems without forming the normal equations X'X, whose condition number is the
 * square of X's.
 */
import { slabFloat64 } from './typed-slab.ts'

/** A QR factorisation of an m × n matrix (m >= n), stored compactly as in LINPACK/JAMA. */
export interface QrDecomposition {
  readonly rows: number
  readonly cols: number
  /** column-major m × n: Householder vectors on and below the diagonal, R strictly above it */
  readonly packed: Float64Array
  /** diagonal of R */
  readonly rDiagonal: Float64Array
}

/** Raised when the design matrix does not have full column rank (within rounding). */
export class RankDeficientError extends Error {
  readonly column: number
  constructor(column: number) {
    super(`leastSquares requires a full-rank design, column ${column} is (nearly) a combination of the others`)
    this.name = 'RankDeficientError'
    this.column = column
  }
}

/**
 * Householder QR decomposition A = QR of a column-major m × n matrix.
 *
 * Each column's norm is computed with scaling (largest entry first) so that neither overflow nor
 * underflow can spoil it. A column whose remaining norm is below 1e-12 of its original norm makes the
 * matrix rank deficient and raises RankDeficientError rather than returning meaningless coefficients.
 *
 * Reference: https://en.wikipedia.org/wiki/QR_decomposition#Using_Householder_reflections
 * (layout as in the public-domain JAMA library).
 * Cost: O(m n²) time, O(m n) memory.
 *
 * @param matrix column-major values, length rows × cols (not modified)
 * @param rows m
 * @param cols n (<= m)
 * @throws RankDeficientError when a column is (nearly) dependent on earlier ones
 * @example
 * ```ts
 * const qr = qrDecompose(Float64Array.from([1, 1, 1, 1, 2, 3]), 3, 2)
 * qrSolve(qr, Float64Array.from([1, 2, 3])) // => Float64Array [0, 1]
 * ```
 */
export function qrDecompose(matrix: Float64Array, rows: number, cols: number): QrDecomposition {
  if (rows < cols) throw new RangeError(`qrDecompose requires at least as many rows as columns, got ${rows} × ${cols}`)
  if (matrix.length !== rows * cols) throw new RangeError(`qrDecompose requires ${rows * cols} values, got ${matrix.length}`)
  const packed = Float64Array.from(matrix)
  const rDiagonal = new Float64Array(cols)
  qrDecomposeInPlace(packed, rows, cols, rDiagonal)
  return { rows, cols, packed, rDiagonal }
}

/**
 * In-place variant of {@link qrDecompose} for hot loops (iteratively reweighted least squares):
 * overwrites `packed` with the compact factorisation and fills `rDiagonal`, allocating nothing.
 *
 * @throws RankDeficientError when a column is (nearly) dependent on earlier ones
 * @example
 * ```ts
 * const packed = Float64Array.from([1, 1, 1, 1, 2, 3]); const diagonal = new Float64Array(2)
 * qrDecomposeInPlace(packed, 3, 2, diagonal) // diagonal => [-1.732..., 1.414...]
 * ```
 */
export function qrDecomposeInPlace(packed: Float64Array, rows: number, cols: number, rDiagonal: Float64Array): void {
  for (let k = 0; k < cols; k++) {
    const columnK = k * rows
    // size of the whole original column k (rows above k have not been touched yet by step k's
    // own reflection, but earlier reflections preserve the column norm), for the rank test
    let columnScale = 0
    let remainingScale = 0
    for (let i = 0; i < rows; i++) {
      const magnitude = Math.abs(packed[columnK + i]!)
      if (magnitude > columnScale) columnScale = magnitude
      if (i >= k && magnitude > remainingScale) remainingScale = magnitude
    }
    let norm = 0
    if (remainingScale > 0) {
      let sumSquares = 0
      for (let i = k; i < rows; i++) {
        const scaled = packed[columnK + i]! / remainingScale
        sumSquares += scaled * scaled
      }
      norm = remainingScale * Math.sqrt(sumSquares)
    }
    if (columnScale === 0 || !(norm > 1e-12 * columnScale * Math.sqrt(rows))) throw new RankDeficientError(k)
    if (packed[columnK + k]! < 0) norm = -norm
    for (let i = k; i < rows; i++) packed[columnK + i]! /= norm
    packed[columnK + k]! += 1
    // apply the reflection to the remaining columns
    for (let j = k + 1; j < cols; j++) {
      const columnJ = j * rows
      const dot = columnDot(packed, columnK, columnJ, k, rows)
      const factor = -dot / packed[columnK + k]!
      for (let i = k; i < rows; i++) packed[columnJ + i]! += factor * packed[columnK + i]!
    }
    rDiagonal[k] = -norm
  }
}

/**
 * Σ_{i=from}^{rows−1} packed[a + i] · packed[b + i] with two interleaved partial sums: a single
 * running sum waits for each addition before the next, two keep the processor busy (the QR of a
 * tall, narrow design spends most of its time here). The order of the additions differs from a
 * single running sum only in rounding.
 */
function columnDot(packed: Float64Array, a: number, b: number, from: number, rows: number): number {
  let even = 0
  let odd = 0
  let i = from
  for (; i + 1 < rows; i += 2) {
    even += packed[a + i]! * packed[b + i]!
    odd += packed[a + i + 1]! * packed[b + i + 1]!
  }
  if (i < rows) even += packed[a + i]! * packed[b + i]!
  return even + odd
}

/**
 * Apply Qᵀ to a vector of length m (returns a new array).
 *
 * @example
 * ```ts
 * applyQTranspose(qrDecompose(Float64Array.from([3, 4]), 2, 1), Float64Array.from([3, 4])) // => [-5, 0]
 * ```
 */
export function applyQTranspose(qr: QrDecomposition, vector: Float64Array): Float64Array {
  const { rows, cols, packed } = qr
  if (vector.length !== rows) throw new RangeError(`applyQTranspose requires a vector of length ${rows}, got ${vector.length}`)
  const result = Float64Array.from(vector)
  for (let k = 0; k < cols; k++) {
    const columnK = k * rows
    let dot = 0
    for (let i = k; i < rows; i++) dot += packed[columnK + i]! * result[i]!
    const factor = -dot / packed[columnK + k]!
    for (let i = k; i < rows; i++) result[i]! += factor * packed[columnK + i]!
  }
  return result
}

/**
 * Least-squares solution of A x ≈ b from a QR decomposition: x = R⁻¹ (Qᵀ b)[0..n).
 *
 * @example
 * ```ts
 * qrSolve(qrDecompose(Float64Array.from([1, 1, 1, 1, 2, 3]), 3, 2), Float64Array.from([2, 4, 6])) // => [0, 2]
 * ```
 */
export function qrSolve(qr: QrDecomposition, rightHandSide: Float64Array): Float64Array {
  const { rows, cols, packed, rDiagonal } = qr
  const rotated = applyQTranspose(qr, rightHandSide)
  const solution = new Float64Array(cols)
  for (let k = cols - 1; k >= 0; k--) {
    let value = rotated[k]!
    for (let j = k + 1; j < cols; j++) value -= packed[j * rows + k]! * solution[j]!
    solution[k] = value / rDiagonal[k]!
  }
  return solution
}

/**
 * Unscaled covariance (RᵀR)⁻¹ = (AᵀA)⁻¹ as a row-major n × n array, computed as R⁻¹R⁻ᵀ so that AᵀA
 * is never formed.
 *
 * Cost: O(n³).
 * @example
 * ```ts
 * qrUnscaledCovariance(qrDecompose(Float64Array.from([1, 1, 1, 1]), 4, 1)) // => [0.25]
 * ```
 */
export function qrUnscaledCovariance(qr: QrDecomposition): Float64Array {
  const { rows, cols, packed, rDiagonal } = qr
  // inverse of the upper-triangular R, column by column (row-major storage)
  const rInverse = slabFloat64(cols * cols)
  for (let column = 0; column < cols; column++) {
    rInverse[column * cols + column] = 1 / rDiagonal[column]!
    for (let row = column - 1; row >= 0; row--) {
      let sum = 0
      for (let k = row + 1; k <= column; k++) sum += packed[k * rows + row]! * rInverse[k * cols + column]!
      rInverse[row * cols + column] = -sum / rDiagonal[row]!
    }
  }
  const covariance = slabFloat64(cols * cols)
  for (let i = 0; i < cols; i++) {
    for (let j = i; j < cols; j++) {
      let sum = 0
      for (let k = Math.max(i, j); k < cols; k++) sum += rInverse[i * cols + k]! * rInverse[j * cols + k]!
      covariance[i * cols + j] = sum
      covariance[j * cols + i] = sum
    }
  }
  return covariance
}

/**
 * Allocation-free least-squares solve for hot loops: overwrites `rightHandSide` with Qᵀb and writes
 * the n coefficients into `solution`.
 *
 * @example
 * ```ts
 * // after qrDecomposeInPlace(packed, 3, 2, diagonal) on [[1,1],[1,2],[1,3]]:
 * qrSolveInPlace(packed, 3, 2, diagonal, Float64Array.from([2, 4, 6]), out) // out => [0, 2]
 * ```
 */
export function qrSolveInPlace(
  packed: Float64Array,
  rows: number,
  cols: number,
  rDiagonal: Float64Array,
  rightHandSide: Float64Array,
  solution: Float64Array,
): void {
  for (let k = 0; k < cols; k++) {
    const columnK = k * rows
    let dot = 0
    for (let i = k; i < rows; i++) dot += packed[columnK + i]! * rightHandSide[i]!
    const factor = -dot / packed[columnK + k]!
    for (let i = k; i < rows; i++) rightHandSide[i]! += factor * packed[columnK + i]!
  }
  for (let k = cols - 1; k >= 0; k--) {
    let value = rightHandSide[k]!
    for (let j = k + 1; j < cols; j++) value -= packed[j * rows + k]! * solution[j]!
    solution[k] = value / rDiagonal[k]!
  }
}
