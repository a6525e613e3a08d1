/**
 * @module taxonomy/log-likelihood-ratio
 * Log-likelihood ratio (G²) test of a 2×2 contingency table, Dunning's "surprise" statistic, used
 * to score how much more often a phrase occurs in recent documents than in earlier ones.
 *
 * Reference: T. Dunning (1993), "Accurate Methods for the Statistics of Surprise and Coincidence",
 * Computational Linguistics 19(1):61–74, https://aclanthology.org/J93-1003/ ;
 * https://en.wikipedia.org/wiki/G-test
 * Cost: O(1).
 */
import { chiSquareSurvival } from '../stats/chi-square-distribution.ts'

export interface RateComparison {
  /** G² = 2 Σ O ln(O / E) over the four cells; 0 when the rates are equal */
  g2: number
  /** upper tail of χ² with one degree of freedom at G² (two-sided) */
  pValue: number
  /** +1 when the first group's rate is higher, -1 when lower, 0 when equal */
  direction: 1 | -1 | 0
}

/** x ln x with the limit 0 at x = 0. */
function xlogx(x: number): number {
  return x > 0 ? x * Math.log(x) : 0
}

/**
 * Compares the rate k1/n1 with k2/n2 (documents containing a phrase out of documents, in two
 * periods) by the log-likelihood ratio of a 2×2 table [[k1, n1−k1], [k2, n2−k2]]. Written as
 * sums of x ln x (Dunning's entropy form), which stays exact when cells are zero.
 *
 * @param k1 documents with the phrase in the first (recent) period
 * @param n1 documents in the first period
 * @param k2 documents with the phrase in the second (earlier) period
 * @param n2 documents in the second period
 * @throws RangeError when a count is negative or not an integer, or k > n, or a period is empty
 * @example
 * ```ts
 * compareRates(10, 100, 2, 100).g2 // => 6.1626 (p ≈ 0.0130)
 * ```
 */
export function compareRates(k1: number, n1: number, k2: number, n2: number): RateComparison {
  for (const [name, v] of [['k1', k1], ['n1', n1], ['k2', k2], ['n2', n2]] as const) {
    if (!Number.isInteger(v) || v < 0) throw new RangeError(`compareRates requires whole counts >= 0, ${name} is ${v}`)
  }
  if (k1 > n1 || k2 > n2) throw new RangeError(`compareRates requires k <= n, got ${k1}/${n1} and ${k2}/${n2}`)
  if (n1 === 0 || n2 === 0) throw new RangeError('compareRates requires documents in both periods')
  const n = n1 + n2
  const k = k1 + k2
  // G² = 2 [Σ cells x ln x − Σ rows r ln r − Σ cols c ln c + N ln N]
  const cells = xlogx(k1) + xlogx(n1 - k1) + xlogx(k2) + xlogx(n2 - k2)
  const margins = xlogx(n1) + xlogx(n2) + xlogx(k) + xlogx(n - k)
  const g2 = Math.max(0, 2 * (cells - margins + xlogx(n)))
  const r1 = k1 / n1
  const r2 = k2 / n2
  return { g2, pValue: chiSquareSurvival(g2, 1), direction: r1 > r2 ? 1 : r1 < r2 ? -1 : 0 }
}
