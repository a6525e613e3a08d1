/**
 * @module ability/response-function
 * Logistic item response functions for dichotomous items: Rasch/1PL, 2PL and 3PL.
 *
 * P(θ) = c + (1 − c) / (1 + exp(−D·a·(θ − b)))
 *
 * with discrimination a, difficulty b, lower asymptote (pseudo-guessing) c and scaling constant D.
 * D = 1 is the plain logistic metric used by Baker (2001) and Baker & Kim (2017); D = 1.702 puts the
 * logistic on the normal-ogive metric (Haley 1952). Reference: F. B. Baker, The Basics of Item
 * Response Theory, 2nd ed. (2001), ch. 2, free at https://eric.ed.gov/?id=ED458219.
 */

/** Parameters of one dichotomous item. Rasch items have a = 1 and c = 0; 2PL items have c = 0. */
export interface ItemParams {
  /** discrimination (slope), > 0 */
  a: number
  /** difficulty (location) on the θ scale */
  b: number
  /** lower asymptote, 0 ≤ c < 1; 0 unless the item is 3PL */
  c: number
}

/** The item response models this module supports. */
export type IrtModel = 'rasch' | '2pl' | '3pl'

/** Scaling constant that makes the logistic approximate the normal ogive (Haley 1952). */
export const D_NORMAL_OGIVE = 1.702

/** Default scaling constant: the plain logistic metric. */
export const D_LOGISTIC = 1

/**
 * Build item parameters for a model, filling the fixed ones (Rasch: a = 1; Rasch and 2PL: c = 0).
 *
 * @throws RangeError when a ≤ 0, c outside [0, 1) or a value is not finite
 * @example makeItem('rasch', { b: 1 }) // => { a: 1, b: 1, c: 0 }
 */
export function makeItem(model: IrtModel, params: { a?: number; b: number; c?: number }): ItemParams {
  const a = model === 'rasch' ? 1 : (params.a ?? 1)
  const c = model === '3pl' ? (params.c ?? 0) : 0
  const item = { a, b: params.b, c }
  validateItem(item)
  return item
}

/**
 * Check an item's parameters.
 *
 * @throws RangeError naming the offending parameter
 */
export function validateItem(item: ItemParams, label = 'item'): void {
  if (!Number.isFinite(item.a) || item.a <= 0) throw new RangeError(`${label}: a must be a finite number > 0 (got ${item.a})`)
  if (!Number.isFinite(item.b)) throw new RangeError(`${label}: b must be a finite number (got ${item.b})`)
  if (!Number.isFinite(item.c) || item.c < 0 || item.c >= 1) throw new RangeError(`${label}: c must be in [0, 1) (got ${item.c})`)
}

/**
 * Probability of a correct response, the item characteristic curve. O(1).
 *
 * @example probability(1, { a: 0.5, b: 1, c: 0 }) // => 0.5
 * @example probability(1.5, { a: 1.3, b: 1.5, c: 0.2 }) // => 0.6 (= (1 + c)/2)
 */
export function probability(theta: number, item: ItemParams, D = D_LOGISTIC): number {
  return item.c + (1 - item.c) / (1 + Math.exp(-D * item.a * (theta - item.b)))
}

/**
 * Test characteristic curve (expected number-correct true score): Σ P_j(θ). O(items).
 *
 * @example trueScore(0, [{ a: 1, b: 0, c: 0 }, { a: 1, b: 0, c: 0 }]) // => 1
 */
export function trueScore(theta: number, items: readonly ItemParams[], D = D_LOGISTIC): number {
  let sum = 0
  for (const item of items) sum += probability(theta, item, D)
  return sum
}
