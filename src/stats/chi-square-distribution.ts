/**
 * @module stats/chi-square-distribution
 * Chi-square distribution tails: likelihood-ratio tests and goodness-of-fit p-values.
 */
import { regularizedGammaP, regularizedGammaQ } from './incomplete-gamma.ts'

function checkArguments(name: string, x: number, degreesOfFreedom: number): void {
  if (!(degreesOfFreedom > 0)) throw new RangeError(`${name} requires positive degrees of freedom, got ${degreesOfFreedom}`)
  if (Number.isNaN(x)) throw new RangeError(`${name} requires a number, got NaN`)
}

/**
 * Chi-square cumulative distribution P(X ≤ x) = P(k/2, x/2).
 *
 * Reference: https://en.wikipedia.org/wiki/Chi-squared_distribution
 * Cost: O(1) (one incomplete gamma).
 *
 * @example
 * ```ts
 * chiSquareCdf(2, 2) // => 0.6321205588285577 (= 1 − e^−1)
 * ```
 */
export function chiSquareCdf(x: number, degreesOfFreedom: number): number {
  checkArguments('chiSquareCdf', x, degreesOfFreedom)
  if (x <= 0) return 0
  return regularizedGammaP(degreesOfFreedom / 2, x / 2)
}

/**
 * Chi-square upper tail P(X > x) = Q(k/2, x/2), accurate for tiny p-values.
 *
 * @example
 * ```ts
 * chiSquareSurvival(3.841458820694124, 1) // => 0.05
 * ```
 */
export function chiSquareSurvival(x: number, degreesOfFreedom: number): number {
  checkArguments('chiSquareSurvival', x, degreesOfFreedom)
  if (x <= 0) return 1
  return regularizedGammaQ(degreesOfFreedom / 2, x / 2)
}
