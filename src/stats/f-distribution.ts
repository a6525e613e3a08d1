/**
 * @module stats/f-distribution
 * Upper tail of Fisher's F distribution, for quasi-likelihood F tests (a deviance drop divided by
 * an estimated dispersion).
 */
import { regularizedBeta } from './incomplete-beta.ts'

/**
 * F distribution upper tail P(F > f) with (d1, d2) degrees of freedom,
 * = I_{d2/(d2 + d1 f)}(d2/2, d1/2).
 *
 * Reference: https://en.wikipedia.org/wiki/F-distribution (cdf via the regularized incomplete beta).
 * Cost: O(1).
 *
 * @param f statistic (values <= 0 give 1)
 * @param numeratorDf d1 > 0
 * @param denominatorDf d2 > 0
 * @example
 * ```ts
 * fSurvival(4.9646027437307145, 1, 10) // => 0.05 (F(1, ν) is t² with ν df)
 * ```
 */
export function fSurvival(f: number, numeratorDf: number, denominatorDf: number): number {
  if (!(numeratorDf > 0) || !(denominatorDf > 0)) {
    throw new RangeError(`fSurvival requires positive degrees of freedom, got ${numeratorDf} and ${denominatorDf}`)
  }
  if (Number.isNaN(f)) throw new RangeError('fSurvival requires a number, got NaN')
  if (f <= 0) return 1
  if (f === Infinity) return 0
  return regularizedBeta(denominatorDf / (denominatorDf + numeratorDf * f), denominatorDf / 2, numeratorDf / 2)
}
