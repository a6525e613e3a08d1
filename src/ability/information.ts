/**
 * @module ability/information
 * Item and test information functions for logistic IRT models.
 *
 * I_j(θ) = D²a² · (Q/P) · ((P − c)/(1 − c))²    (Birnbaum; Baker 2001 ch. 6)
 *
 * which reduces to D²a²PQ for the 2PL and D²PQ for the Rasch model. The test information is the sum
 * over items and the MLE standard error is 1/√I(θ). Reference: F. B. Baker, The Basics of Item
 * Response Theory (2001), ch. 6, https://eric.ed.gov/?id=ED458219. O(1) per item.
 */
import { probability, type ItemParams, D_LOGISTIC } from './response-function.ts'

/**
 * Fisher information of one item at θ.
 *
 * @example itemInformation(1, { a: 1.5, b: 1, c: 0 }) // => 0.5625 (= a²/4)
 */
export function itemInformation(theta: number, item: ItemParams, D = D_LOGISTIC): number {
  const p = probability(theta, item, D)
  const q = 1 - p
  if (p <= 0 || q <= 0) return 0
  const share = (p - item.c) / (1 - item.c)
  return D * D * item.a * item.a * (q / p) * share * share
}

/**
 * Test information Σ I_j(θ). O(items).
 *
 * @example testInformation(0, [{ a: 1, b: 0, c: 0 }, { a: 1, b: 0, c: 0 }]) // => 0.5
 */
export function testInformation(theta: number, items: readonly ItemParams[], D = D_LOGISTIC): number {
  let sum = 0
  for (const item of items) sum += itemInformation(theta, item, D)
  return sum
}

/**
 * Location and height of a 3PL item's maximum information, in closed form (Birnbaum 1968; Lord 1980):
 *
 * θmax = b + ln[(1 + √(1 + 8c))/2] / (Da)
 * Imax = D²a² [1 − 20c − 8c² + (1 + 8c)^{3/2}] / [8(1 − c)²]
 *
 * For c = 0 this gives θmax = b and Imax = D²a²/4. O(1).
 *
 * @example maxInformation({ a: 1.5, b: 1, c: 0.2 }) // => { theta: 1.17809, information: 0.383367 }
 */
export function maxInformation(item: ItemParams, D = D_LOGISTIC): { theta: number; information: number } {
  const { a, b, c } = item
  const theta = b + Math.log((1 + Math.sqrt(1 + 8 * c)) / 2) / (D * a)
  const information = (D * D * a * a * (1 - 20 * c - 8 * c * c + Math.pow(1 + 8 * c, 1.5))) / (8 * (1 - c) * (1 - c))
  return { theta, information }
}
