/**
 * @module ability/mle
 * Maximum-likelihood ability estimation by Fisher scoring (Newton–Raphson with the expected
 * information; identical to Newton–Raphson for Rasch and 2PL items, where observed and expected
 * information coincide), with a bounded step and step halving if the log-likelihood falls.
 *
 * score(θ)  = Σ D·a_j (u_j − P_j)(P_j − c_j) / (P_j (1 − c_j))
 * θ ← θ + clamp(score/I(θ), ±maxStep),   SE = 1/√I(θ̂)
 *
 * All-correct and all-wrong patterns have no finite maximum and are reported as such without
 * iterating; a 3PL pattern whose likelihood keeps rising towards the θ bound is reported 'at-bound'.
 * Reference: F. B. Baker, The Basics of Item Response Theory (2001), ch. 5,
 * https://eric.ed.gov/?id=ED458219; Baker & Kim (2017) package birtr, R/ability.R.
 * O(items × iterations).
 */
import { probability, type ItemParams, D_LOGISTIC } from './response-function.ts'
import { testInformation } from './information.ts'
import { checkPattern } from './eap.ts'

/** Options for {@link estimateMle}. */
export interface MleOptions {
  D?: number
  /** starting value (default: the logit of the proportion correct, clamped to ±3) */
  start?: number
  /** largest |Δθ| per iteration (default 1) */
  maxStep?: number
  /** stop when |Δθ| < tolerance (default 1e-6) */
  tolerance?: number
  maxIterations?: number
  /** θ is kept within ±bound; reaching it means no finite maximum was found (default 6) */
  bound?: number
}

/** Outcome of a maximum-likelihood search. */
export type MleStatus = 'converged' | 'all-correct' | 'all-wrong' | 'at-bound' | 'not-converged'

export interface MleResult {
  status: MleStatus
  /** the estimate when status is 'converged'; otherwise the last iterate (±Infinity for perfect patterns) */
  theta: number
  /** 1/√I(θ̂); NaN unless converged */
  se: number
  iterations: number
  /** θ after each iteration */
  path: number[]
}

/** Log-likelihood of a pattern at θ. */
export function logLikelihood(theta: number, items: readonly ItemParams[], responses: ArrayLike<number>, D = D_LOGISTIC): number {
  let sum = 0
  for (let j = 0; j < items.length; j++) {
    const p = Math.min(Math.max(probability(theta, items[j], D), 1e-300), 1 - 1e-16)
    sum += responses[j] === 1 ? Math.log(p) : Math.log(1 - p)
  }
  return sum
}

function score(theta: number, items: readonly ItemParams[], responses: ArrayLike<number>, D: number): number {
  let sum = 0
  for (let j = 0; j < items.length; j++) {
    const item = items[j]
    const p = probability(theta, item, D)
    if (p <= 0 || p >= 1) continue
    sum += (D * item.a * (responses[j] - p) * (p - item.c)) / (p * (1 - item.c))
  }
  return sum
}

/**
 * Maximum-likelihood estimate of θ for one response pattern.
 *
 * @throws RangeError when lengths differ, a response is not 0/1, or there are no responses
 * @example
 * ```ts
 * // Baker's three-item example (CHECKS.md 1a)
 * estimateMle([{ a: 1, b: -1, c: 0 }, { a: 1.2, b: 0, c: 0 }, { a: 0.8, b: 1, c: 0 }], [1, 0, 1])
 * // => { status: 'converged', theta: 0.324846, se: 1.22957, ... }
 * ```
 */
export function estimateMle(items: readonly ItemParams[], responses: ArrayLike<number>, options: MleOptions = {}): MleResult {
  checkPattern(items, responses)
  const D = options.D ?? D_LOGISTIC
  const maxStep = options.maxStep ?? 1
  const tolerance = options.tolerance ?? 1e-6
  const maxIterations = options.maxIterations ?? 100
  const bound = options.bound ?? 6
  let correct = 0
  for (let j = 0; j < responses.length; j++) correct += responses[j]
  if (correct === items.length) return { status: 'all-correct', theta: Infinity, se: Number.NaN, iterations: 0, path: [] }
  if (correct === 0) return { status: 'all-wrong', theta: -Infinity, se: Number.NaN, iterations: 0, path: [] }

  const share = correct / items.length
  let theta = options.start ?? Math.max(-3, Math.min(3, Math.log(share / (1 - share))))
  let current = logLikelihood(theta, items, responses, D)
  const path: number[] = []
  for (let iteration = 1; iteration <= maxIterations; iteration++) {
    const information = testInformation(theta, items, D)
    let step = score(theta, items, responses, D) / information
    if (!Number.isFinite(step)) return { status: 'not-converged', theta, se: Number.NaN, iterations: iteration, path }
    step = Math.max(-maxStep, Math.min(maxStep, step))
    // step halving: Fisher scoring is an ascent direction, so a short enough step always helps
    let next = Math.max(-bound, Math.min(bound, theta + step))
    let nextLogLik = logLikelihood(next, items, responses, D)
    for (let halving = 0; halving < 30 && nextLogLik < current - 1e-12; halving++) {
      step /= 2
      next = Math.max(-bound, Math.min(bound, theta + step))
      nextLogLik = logLikelihood(next, items, responses, D)
    }
    const moved = next - theta
    theta = next
    current = nextLogLik
    path.push(theta)
    if (Math.abs(theta) >= bound) return { status: 'at-bound', theta, se: Number.NaN, iterations: iteration, path }
    if (Math.abs(moved) < tolerance) {
      return { status: 'converged', theta, se: 1 / Math.sqrt(testInformation(theta, items, D)), iterations: iteration, path }
    }
  }
  return { status: 'not-converged', theta, se: Number.NaN, iterations: maxIterations, path }
}
