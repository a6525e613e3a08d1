/**
 * @module stats/benjamini-hochberg
 * Benjamini–Hochberg step-up procedure controlling the false discovery rate across many tests
 * (thousands of skills per run), with adjusted p-values.
 */

export interface BenjaminiHochbergResult {
  /** BH-adjusted p-values, in input order: min_{k>=i} (m/k) p_(k), capped at 1 */
  adjusted: number[]
  /** rejected at level q, in input order */
  rejected: boolean[]
  /** number of rejections */
  rejections: number
  /** largest p-value rejected (the data-driven threshold), or 0 when none */
  threshold: number
}

/**
 * Benjamini–Hochberg procedure: reject the k smallest p-values, k the largest index with
 * p_(k) <= k q / m. Equivalently reject where the adjusted p-value is <= q.
 *
 * NaN p-values (tests that could not be made) are not counted in m and come back as NaN, never
 * rejected.
 *
 * Reference: Benjamini & Hochberg (1995), JRSS-B 57(1):289–300;
 * https://en.wikipedia.org/wiki/False_discovery_rate#Benjamini%E2%80%93Hochberg_procedure
 * Cost: O(m log m).
 *
 * @param pValues p-values in [0, 1] (or NaN)
 * @param q false discovery rate, in (0, 1)
 * @throws RangeError on p-values outside [0, 1] or q outside (0, 1)
 * @example
 * ```ts
 * benjaminiHochberg([0.01, 0.04, 0.03], 0.05).adjusted // => [0.03, 0.04, 0.04]
 * ```
 */
export function benjaminiHochberg(pValues: readonly number[], q = 0.05): BenjaminiHochbergResult {
  if (!(q > 0 && q < 1)) throw new RangeError(`benjaminiHochberg requires q in (0, 1), got ${q}`)
  const order: number[] = []
  pValues.forEach((p, index) => {
    if (Number.isNaN(p)) return
    if (!(p >= 0 && p <= 1)) throw new RangeError(`benjaminiHochberg requires p-values in [0, 1], position ${index} has ${p}`)
    order.push(index)
  })
  order.sort((a, b) => pValues[a]! - pValues[b]!)
  const m = order.length
  const adjusted = pValues.map(() => Number.NaN)
  const rejected = pValues.map(() => false)
  let runningMinimum = 1
  for (let rank = m; rank >= 1; rank--) {
    const index = order[rank - 1]!
    runningMinimum = Math.min(runningMinimum, (m / rank) * pValues[index]!)
    adjusted[index] = runningMinimum
  }
  let rejections = 0
  let threshold = 0
  for (let rank = 1; rank <= m; rank++) {
    const index = order[rank - 1]!
    if (pValues[index]! <= (rank * q) / m) {
      rejections = rank
      threshold = pValues[index]!
    }
  }
  for (let rank = 1; rank <= rejections; rank++) rejected[order[rank - 1]!] = true
  return { adjusted, rejected, rejections, threshold }
}
