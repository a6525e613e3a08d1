/**
 * @module stats/seasonal-kendall
 * Seasonal Kendall trend test: Mann–Kendall computed within each season (month of year) and summed,
 * so that a regular seasonal pattern is not mistaken for a trend.
 */
import { mannKendall } from './mann-kendall.ts'
import { normalSurvival } from './normal-distribution.ts'

export interface SeasonalKendallResult {
  n: number
  /** number of seasons with at least two observations */
  seasons: number
  /** S = Σ_k S_k */
  s: number
  /** Σ_k Var(S_k) (seasons treated as independent) */
  variance: number
  /** S / Σ_k n_k(n_k−1)/2 */
  tau: number
  z: number
  pValue: number
}

/**
 * Seasonal Kendall test (Hirsch, Slack & Smith 1982): S = Σ S_k and Var(S) = Σ Var(S_k) over seasons,
 * Z = (S − sign S)/√Var(S). Seasons are assumed independent; the serial-correlation correction of
 * Hirsch & Slack (1984) is not applied.
 *
 * Reference: USGS, Helsel et al. (2020) Statistical Methods in Water Resources, §12.4.1
 * (https://pubs.usgs.gov/publication/tm4A3).
 * Cost: O(Σ n_k²).
 *
 * @param values observations
 * @param times times (sorted or not), same length
 * @param seasons season label per observation (e.g. month of year 1..12)
 * @example
 * ```ts
 * seasonalKendall([1, 2, 3, 4], [0, 1, 12, 13], [1, 2, 1, 2]).s // => 2
 * ```
 */
export function seasonalKendall(
  values: readonly number[],
  times: readonly number[],
  seasons: readonly (number | string)[],
): SeasonalKendallResult {
  const n = values.length
  if (times.length !== n || seasons.length !== n) {
    throw new RangeError(`seasonalKendall requires equal lengths, got ${n} values, ${times.length} times, ${seasons.length} seasons`)
  }
  const groups = new Map<number | string, { values: number[]; times: number[] }>()
  for (let i = 0; i < n; i++) {
    let group = groups.get(seasons[i]!)
    if (!group) {
      group = { values: [], times: [] }
      groups.set(seasons[i]!, group)
    }
    group.values.push(values[i]!)
    group.times.push(times[i]!)
  }
  let s = 0
  let variance = 0
  let pairs = 0
  let usedSeasons = 0
  for (const group of groups.values()) {
    if (group.values.length < 2) continue
    const result = mannKendall(group.values, group.times)
    s += result.s
    variance += result.variance
    pairs += (group.values.length * (group.values.length - 1)) / 2
    usedSeasons++
  }
  const z = variance > 0 ? (s - Math.sign(s)) / Math.sqrt(variance) : 0
  return {
    n,
    seasons: usedSeasons,
    s,
    variance,
    tau: pairs > 0 ? s / pairs : Number.NaN,
    z,
    pValue: variance > 0 ? Math.min(1, 2 * normalSurvival(Math.abs(z))) : 1,
  }
}
