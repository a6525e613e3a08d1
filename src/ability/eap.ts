/**
 * @module ability/eap
 * Expected a posteriori (EAP) ability estimation: the mean and standard deviation of the posterior
 * of θ given a response pattern, known item parameters and a normal prior, by quadrature.
 *
 * θ̂ = Σ_k x_k L(x_k) w_k / Σ_k L(x_k) w_k,   PSD² = Σ_k (x_k − θ̂)² L(x_k) w_k / Σ_k L(x_k) w_k
 *
 * The likelihood is accumulated in logs and shifted by its maximum before exponentiation, so long
 * tests do not underflow. EAP exists for every pattern, including all-correct and all-wrong ones.
 * Reference: R. D. Bock & R. J. Mislevy (1982), Applied Psychological Measurement 6, 431–444
 * (https://doi.org/10.1177/014662168200600405); F. B. Baker & S.-H. Kim (2004), Item Response
 * Theory: Parameter Estimation Techniques, ch. 7. O(items × points) per person.
 */
import { probability, type ItemParams, D_LOGISTIC } from './response-function.ts'
import { normalGrid, DEFAULT_PRIOR, type NormalPrior, type QuadratureGrid, type QuadratureOptions } from './quadrature.ts'
import type { ResponseMatrix } from './response-data.ts'

/** Options shared by the EAP functions. */
export interface EapOptions {
  D?: number
  prior?: NormalPrior
  quadrature?: QuadratureOptions
}

/** A point estimate with its standard error (posterior SD for EAP). */
export interface EapEstimate {
  theta: number
  se: number
}

/**
 * Per-item log P and log Q at every node, item-major: table[j * K + k]. Reused across people.
 */
export interface LogProbabilityTable {
  grid: QuadratureGrid
  logP: Float64Array
  logQ: Float64Array
}

/**
 * Tabulate log P_j(x_k) and log(1 − P_j(x_k)). O(items × points).
 */
export function logProbabilityTable(items: readonly ItemParams[], grid: QuadratureGrid, D = D_LOGISTIC): LogProbabilityTable {
  const K = grid.nodes.length
  const logP = new Float64Array(items.length * K)
  const logQ = new Float64Array(items.length * K)
  items.forEach((item, j) => {
    for (let k = 0; k < K; k++) {
      const p = probability(grid.nodes[k], item, D)
      // clamp so that a saturated logistic never yields log(0) = −Infinity
      const pc = Math.min(Math.max(p, 1e-300), 1 - 1e-16)
      logP[j * K + k] = Math.log(pc)
      logQ[j * K + k] = Math.log(1 - pc)
    }
  })
  return { grid, logP, logQ }
}

/**
 * Posterior mean and SD from a vector of log-likelihoods at the nodes (modified in place to the
 * unnormalised log posterior).
 */
function summarisePosterior(logPost: Float64Array, grid: QuadratureGrid): EapEstimate {
  const K = logPost.length
  let max = -Infinity
  for (let k = 0; k < K; k++) {
    logPost[k] += grid.logWeights[k]
    if (logPost[k] > max) max = logPost[k]
  }
  let total = 0
  let first = 0
  for (let k = 0; k < K; k++) {
    const weight = Math.exp(logPost[k] - max)
    logPost[k] = weight
    total += weight
    first += weight * grid.nodes[k]
  }
  const mean = first / total
  let second = 0
  for (let k = 0; k < K; k++) {
    const d = grid.nodes[k] - mean
    second += logPost[k] * d * d
  }
  return { theta: mean, se: Math.sqrt(second / total) }
}

/**
 * EAP estimate for one response pattern.
 *
 * @param items item parameters, one per response
 * @param responses 0/1 per item
 * @throws RangeError when lengths differ, a response is not 0/1, or there are no responses
 * @example
 * ```ts
 * // Baker's three items (CHECKS.md 1e): 41 points on [−4, 4]
 * estimateEap([{ a: 1, b: -1, c: 0 }, { a: 1.2, b: 0, c: 0 }, { a: 0.8, b: 1, c: 0 }], [1, 0, 1],
 *   { quadrature: { points: 41, lower: -4, upper: 4 } }) // => { theta: 0.144699, se: 0.788522 }
 * ```
 */
export function estimateEap(items: readonly ItemParams[], responses: ArrayLike<number>, options: EapOptions = {}): EapEstimate {
  checkPattern(items, responses)
  const grid = normalGrid(options.prior ?? DEFAULT_PRIOR, options.quadrature)
  const D = options.D ?? D_LOGISTIC
  const K = grid.nodes.length
  const logPost = new Float64Array(K)
  for (let j = 0; j < items.length; j++) {
    const item = items[j]
    const correct = responses[j] === 1
    for (let k = 0; k < K; k++) {
      const p = Math.min(Math.max(probability(grid.nodes[k], item, D), 1e-300), 1 - 1e-16)
      logPost[k] += Math.log(correct ? p : 1 - p)
    }
  }
  return summarisePosterior(logPost, grid)
}

/**
 * EAP estimates for everyone in a response matrix, sharing one table of log probabilities.
 * People with no responses get NaN. O(responses × points).
 *
 * @example eapBatch(items, fromDense([[1, 0, 1]])).theta[0] // => 0.1447 for Baker's items
 */
export function eapBatch(
  items: readonly ItemParams[],
  matrix: ResponseMatrix,
  options: EapOptions = {},
): { theta: Float64Array; se: Float64Array } {
  if (items.length !== matrix.nItems) throw new RangeError(`eapBatch: ${items.length} items given for a matrix of ${matrix.nItems}`)
  const grid = normalGrid(options.prior ?? DEFAULT_PRIOR, options.quadrature)
  const table = logProbabilityTable(items, grid, options.D ?? D_LOGISTIC)
  const K = grid.nodes.length
  const theta = new Float64Array(matrix.nPersons)
  const se = new Float64Array(matrix.nPersons)
  const logPost = new Float64Array(K)
  const { logP, logQ } = table
  for (let p = 0; p < matrix.nPersons; p++) {
    const from = matrix.start[p]
    const to = matrix.start[p + 1]
    if (to === from) {
      theta[p] = Number.NaN
      se[p] = Number.NaN
      continue
    }
    logPost.fill(0)
    for (let e = from; e < to; e++) {
      const offset = matrix.item[e] * K
      const source = matrix.response[e] === 1 ? logP : logQ
      for (let k = 0; k < K; k++) logPost[k] += source[offset + k]
    }
    const estimate = summarisePosterior(logPost, grid)
    theta[p] = estimate.theta
    se[p] = estimate.se
  }
  return { theta, se }
}

/** Validate one response pattern against its items. */
export function checkPattern(items: readonly ItemParams[], responses: ArrayLike<number>): void {
  if (items.length !== responses.length) {
    throw new RangeError(`response pattern has ${responses.length} responses for ${items.length} items`)
  }
  if (items.length === 0) throw new RangeError('ability estimation requires at least one response')
  for (let j = 0; j < responses.length; j++) {
    const u = responses[j]
    if (u !== 0 && u !== 1) throw new RangeError(`response ${j}: must be 0 or 1 (got ${u})`)
  }
}
