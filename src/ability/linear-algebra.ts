/**
 * @module ability/linear-algebra
 * Inverse of a small symmetric positive-definite matrix by Cholesky factorisation, for the
 * covariance of calibrated item parameters. Reference: https://en.wikipedia.org/wiki/Cholesky_decomposition.
 * O(n³).
 */

/**
 * Invert a symmetric positive-definite n × n matrix stored row-major. Returns null when the matrix
 * is not numerically positive definite.
 *
 * @example invertSpd(Float64Array.from([4, 2, 2, 3]), 2) // => [0.375, -0.25, -0.25, 0.5]
 */
export function invertSpd(matrix: Float64Array, n: number): Float64Array | null {
  const L = new Float64Array(n * n)
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let sum = matrix[i * n + j]
      for (let k = 0; k < j; k++) sum -= L[i * n + k] * L[j * n + k]
      if (i === j) {
        if (!(sum > 1e-300 * Math.max(1, Math.abs(matrix[i * n + i])))) return null
        L[i * n + i] = Math.sqrt(sum)
      } else {
        L[i * n + j] = sum / L[j * n + j]
      }
    }
  }
  // invert L (lower triangular), then A⁻¹ = L⁻ᵀ L⁻¹
  const Linv = new Float64Array(n * n)
  for (let i = 0; i < n; i++) {
    Linv[i * n + i] = 1 / L[i * n + i]
    for (let j = 0; j < i; j++) {
      let sum = 0
      for (let k = j; k < i; k++) sum -= L[i * n + k] * Linv[k * n + j]
      Linv[i * n + j] = sum / L[i * n + i]
    }
  }
  const inverse = new Float64Array(n * n)
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let sum = 0
      for (let k = i; k < n; k++) sum += Linv[k * n + i] * Linv[k * n + j]
      inverse[i * n + j] = sum
      inverse[j * n + i] = sum
    }
  }
  return inverse
}
