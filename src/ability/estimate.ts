/**
 * @module ability/estimate
 * One entry point for ability estimation from a response pattern: EAP (the default) or maximum
 * likelihood, with the standard error of each (posterior SD for EAP, 1/√I(θ̂) for MLE). Where the
 * MLE does not exist (all-correct or all-wrong patterns, or a 3PL likelihood that rises towards the
 * θ bound) or fails to converge, the EAP estimate is returned instead and `fallback` says why.
 */
import type { ItemParams } from './response-function.ts'
import { estimateEap, eapBatch, type EapOptions } from './eap.ts'
import { estimateMle, type MleOptions } from './mle.ts'
import type { ResponseMatrix } from './response-data.ts'

export type EstimationMethod = 'eap' | 'mle'

/** Why an MLE request was answered with EAP. */
export type FallbackReason = 'all-correct' | 'all-wrong' | 'at-bound' | 'not-converged'

export interface AbilityOptions extends EapOptions {
  method?: EstimationMethod
  mle?: Omit<MleOptions, 'D'>
}

export interface AbilityEstimate {
  theta: number
  se: number
  /** the method that produced theta and se */
  method: EstimationMethod
  /** set when MLE was requested but EAP was used, with the reason */
  fallback: FallbackReason | null
  /** number of responses used */
  nItems: number
}

/** Human-readable note for a fallback, for reports and logs. */
export function fallbackNote(reason: FallbackReason): string {
  switch (reason) {
    case 'all-correct':
      return 'all responses correct: no finite maximum-likelihood estimate, EAP used'
    case 'all-wrong':
      return 'all responses wrong: no finite maximum-likelihood estimate, EAP used'
    case 'at-bound':
      return 'likelihood keeps rising towards the theta bound: no finite maximum-likelihood estimate, EAP used'
    case 'not-converged':
      return 'maximum-likelihood search did not converge, EAP used'
  }
}

/**
 * Estimate θ and its SE for one person.
 *
 * @throws RangeError on a malformed pattern (see {@link estimateEap})
 * @example
 * ```ts
 * estimateAbility(items, [1, 1, 1], { method: 'mle' })
 * // => { theta: 1.05…, se: 0.87…, method: 'eap', fallback: 'all-correct', nItems: 3 }
 * ```
 */
export function estimateAbility(
  items: readonly ItemParams[],
  responses: ArrayLike<number>,
  options: AbilityOptions = {},
): AbilityEstimate {
  const method = options.method ?? 'eap'
  if (method !== 'eap' && method !== 'mle') throw new RangeError(`unknown estimation method "${String(method)}" (use eap or mle)`)
  if (method === 'mle') {
    const mle = estimateMle(items, responses, { ...options.mle, D: options.D })
    if (mle.status === 'converged') {
      return { theta: mle.theta, se: mle.se, method: 'mle', fallback: null, nItems: items.length }
    }
    const eap = estimateEap(items, responses, options)
    return { theta: eap.theta, se: eap.se, method: 'eap', fallback: mle.status, nItems: items.length }
  }
  const eap = estimateEap(items, responses, options)
  return { theta: eap.theta, se: eap.se, method: 'eap', fallback: null, nItems: items.length }
}

/**
 * Estimate everyone in a response matrix. EAP uses a shared probability table (fast path); MLE runs
 * per person with EAP fallback. People without responses get NaN and nItems 0.
 */
export function estimateAbilities(
  items: readonly ItemParams[],
  matrix: ResponseMatrix,
  options: AbilityOptions = {},
): AbilityEstimate[] {
  const method = options.method ?? 'eap'
  const eap = eapBatch(items, matrix, options)
  const out: AbilityEstimate[] = new Array(matrix.nPersons)
  for (let p = 0; p < matrix.nPersons; p++) {
    const from = matrix.start[p]
    const to = matrix.start[p + 1]
    const nItems = to - from
    if (method === 'mle' && nItems > 0) {
      const personItems: ItemParams[] = []
      const responses: number[] = []
      for (let e = from; e < to; e++) {
        personItems.push(items[matrix.item[e]])
        responses.push(matrix.response[e])
      }
      const mle = estimateMle(personItems, responses, { ...options.mle, D: options.D })
      if (mle.status === 'converged') {
        out[p] = { theta: mle.theta, se: mle.se, method: 'mle', fallback: null, nItems }
        continue
      }
      out[p] = { theta: eap.theta[p], se: eap.se[p], method: 'eap', fallback: mle.status, nItems }
      continue
    }
    out[p] = { theta: eap.theta[p], se: eap.se[p], method: 'eap', fallback: null, nItems }
  }
  return out
}
