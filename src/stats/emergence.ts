/**
 * @module stats/emergence
 * Emergence of a term from near zero: the first month from which its share stays above a support
 * floor, after a quiet stretch below it.
 */

export interface EmergenceOptions {
  /** share a term must reach to count as present (default 0.002, 0.2% of documents) */
  floor?: number
  /** consecutive observed periods at or above the floor (default 3) */
  sustain?: number
  /** observed periods below the floor required before (default 6): "from near zero" */
  quiet?: number
  /** also require at least this many mentions in each sustained period (default 3), so that a
   *  single mention in a thin month cannot clear the floor */
  minMentions?: number
}

/** Share of the quiet stretch allowed above the floor (isolated blips before a term takes hold). */
const MAX_PRESENT_BEFORE = 0.2

/**
 * Index of the first period that starts a sustained run above the support floor, preceded by at
 * least `quiet` observed periods of which at most a fifth were above it; null if the term never
 * emerged that way (it was always present, or never took hold). Periods with no documents (NaN share) are skipped: they neither
 * break nor extend a run.
 *
 * The support floor is the minimum-support idea of frequent-itemset mining applied per period;
 * requiring a sustained run guards against one-off spikes (common practice, no source).
 * Reference for the related burst view: Kleinberg (2002), https://www.cs.cornell.edu/home/kleinber/bhs.pdf
 * Cost: O(n).
 *
 * @param shares share per period (NaN = no documents that period)
 * @param mentions mentions per period (same length)
 * @example
 * ```ts
 * emergenceIndex([0, 0, 0, 0, 0, 0, 0.004, 0.006, 0.009], [0, 0, 0, 0, 0, 0, 8, 12, 18]) // => 6
 * ```
 */
export function emergenceIndex(shares: ArrayLike<number>, mentions: ArrayLike<number>, options: EmergenceOptions = {}): number | null {
  const floor = options.floor ?? 0.002
  const sustain = options.sustain ?? 3
  const quiet = options.quiet ?? 6
  const minMentions = options.minMentions ?? 3
  if (shares.length !== mentions.length) throw new RangeError(`emergenceIndex requires one mention count per share, got ${mentions.length} and ${shares.length}`)
  if (!(floor > 0)) throw new RangeError(`emergenceIndex requires a positive floor, got ${floor}`)
  if (!(Number.isInteger(sustain) && sustain >= 1)) throw new RangeError(`emergenceIndex requires a whole sustain >= 1, got ${sustain}`)
  // periods observed before the current run, and how many of them were already above the floor
  let observedBefore = 0
  let presentBefore = 0
  let runStart = -1
  let runLength = 0
  let observedAtRunStart = 0
  let presentAtRunStart = 0
  for (let t = 0; t < shares.length; t++) {
    const share = shares[t]!
    if (Number.isNaN(share)) continue
    const present = share >= floor && mentions[t]! >= minMentions
    if (present) {
      if (runLength === 0) {
        runStart = t
        observedAtRunStart = observedBefore
        presentAtRunStart = presentBefore
      }
      runLength++
      // "from near zero": enough history before the run, and at most a fifth of it above the floor
      if (runLength >= sustain && observedAtRunStart >= quiet && presentAtRunStart <= MAX_PRESENT_BEFORE * observedAtRunStart) {
        return runStart
      }
      presentBefore++
    } else {
      runLength = 0
    }
    observedBefore++
  }
  return null
}
