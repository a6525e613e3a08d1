/**
 * @module curves/series
 * A skill's monthly demand on a contiguous month grid: per source (external postings, internal
 * requests) the documents mentioning it (n) and all documents (N), and the combined demand index.
 * Months with N = 0 are missing, not zero demand.
 */
import { monthIndex, monthLabel } from './months.ts'
import { slabFloat64 } from '../stats/typed-slab.ts'

export type SourceName = 'external' | 'internal'
export const SOURCES: readonly SourceName[] = ['external', 'internal']

/** Raw monthly counts of one source, as read from the database or a file. */
export interface SourceCounts {
  /** documents mentioning the skill per month */
  n: readonly number[]
  /** all documents of that source per month (0 = no data that month) */
  N: readonly number[]
}

/** Input of one skill: months ('YYYY-MM', any order, no repeats) and counts per source. */
export interface SkillSeriesInput {
  id: string
  label?: string
  months: readonly string[]
  external?: SourceCounts
  internal?: SourceCounts
}

/** One source on the grid. NaN share where N = 0. */
export interface GridSource {
  name: SourceName
  n: Float64Array
  N: Float64Array
  share: Float64Array
  observedMonths: number
  mentions: number
  /** normalised weight in the combined index (0 when the source is not used) */
  weight: number
  /** pooled share over the window, Σn / ΣN: the source's level, used to index it */
  level: number
}

export interface SkillGrid {
  id: string
  label: string
  /** month index of grid position 0 */
  firstMonth: number
  length: number
  sources: GridSource[]
  /** combined demand index on the share scale (see buildGrid); NaN unless all used sources are observed */
  combined: Float64Array
  /** S̄ = Σ w_s s̄_s, the index's level */
  combinedLevel: number
  /**
   * information-weighted index on the same scale: S̄ Σ_s n_s(t) / Σ_s N_s(t) s̄_s, observed mentions
   * over the mentions expected at each source's usual level; each source counts by its expected
   * mentions, as in the regression. NaN only when no source has documents that month.
   */
  pooled: Float64Array
  /** mentions and documents summed over used sources (for bursts and emergence) */
  mentions: Float64Array
  documents: Float64Array
  /** sources that had data but too few observed months to be used, with the reason */
  dropped: { name: SourceName; reason: string }[]
}

/** A skill's input that cannot be used; the message names the skill, the month and the field. */
export class SeriesInputError extends Error {
  override name = 'SeriesInputError'
}

export interface GridOptions {
  weights: { external: number; internal: number }
  /** keep only the latest this-many months */
  windowMonths: number
  /** a source needs this many observed months to take part */
  minMonths: number
  /** last month of the grid (index); default: the skill's last month */
  lastMonth?: number
}

/**
 * Put a skill's counts on a contiguous month grid and build the combined demand index.
 *
 * The combined demand index is the weighted mean of the sources' indexed shares, rescaled to the
 * share scale: I(t) = S̄ Σ_s w_s s_s(t)/s̄_s with s̄_s the source's pooled share over the window and
 * S̄ = Σ_s w_s s̄_s. Indexing first makes the weights mean what they say (internal requests, whose
 * shares are a fraction of the postings' shares, still carry their weight of the movement); with one
 * source, I(t) is simply its share. Sources take part with data in at least `minMonths` months
 * (weights renormalised). A month where a taking-part source has no documents is missing in the
 * index; each source's regression still uses all of its observed months.
 *
 * @throws SeriesInputError for malformed months, repeated months, lengths that do not match, negative
 *   or fractional counts, or n > N
 * @example
 * ```ts
 * buildGrid({ id: 'sql', months: ['2024-01', '2024-02'], external: { n: [3, 4], N: [100, 100] } }, options).combined // => [0.03, 0.04]
 * // with internal requests at a fifth of the level, weights 0.7/0.3 weigh their movements, not their levels
 * ```
 */
export function buildGrid(input: SkillSeriesInput, options: GridOptions): SkillGrid {
  const where = `skill "${input.id}"`
  const indices = input.months.map((month, position) => {
    try {
      return monthIndex(month)
    } catch {
      throw new SeriesInputError(`${where}: months[${position}] must be YYYY-MM, got "${month}"`)
    }
  })
  const seen = new Map<number, number>()
  indices.forEach((index, position) => {
    const earlier = seen.get(index)
    if (earlier !== undefined) throw new SeriesInputError(`${where}: month ${input.months[position]} appears twice (positions ${earlier} and ${position})`)
    seen.set(index, position)
  })
  let lowest = Infinity
  let highest = -Infinity
  for (const index of indices) {
    if (index < lowest) lowest = index
    if (index > highest) highest = index
  }
  const last = options.lastMonth ?? (indices.length ? highest : 0)
  const first = indices.length ? Math.max(lowest, last - options.windowMonths + 1) : last
  const length = Math.max(0, last - first + 1)

  const rawSources: GridSource[] = []
  for (const name of ['external', 'internal'] as const) {
    const counts = input[name]
    if (!counts) continue
    if (counts.n.length !== indices.length || counts.N.length !== indices.length) {
      throw new SeriesInputError(`${where}: ${name}.n and ${name}.N need one value per month (${indices.length}), got ${counts.n.length} and ${counts.N.length}`)
    }
    const n = slabFloat64(length)
    const N = slabFloat64(length)
    indices.forEach((index, position) => {
      const mentions = counts.n[position]!
      const total = counts.N[position]!
      const month = input.months[position]
      if (!Number.isInteger(mentions) || mentions < 0) throw new SeriesInputError(`${where}: ${name}.n for ${month} must be a whole number >= 0, got ${mentions}`)
      if (!Number.isInteger(total) || total < 0) throw new SeriesInputError(`${where}: ${name}.N for ${month} must be a whole number >= 0, got ${total}`)
      if (mentions > total) throw new SeriesInputError(`${where}: ${name}.n (${mentions}) exceeds ${name}.N (${total}) for ${month}`)
      const slot = index - first
      if (slot < 0 || slot >= length) return
      n[slot] = mentions
      N[slot] = total
    })
    const share = slabFloat64(length)
    let observedMonths = 0
    let mentionTotal = 0
    for (let t = 0; t < length; t++) {
      if (N[t]! > 0) {
        share[t] = n[t]! / N[t]!
        observedMonths++
        mentionTotal += n[t]!
      } else share[t] = Number.NaN
    }
    let documentTotal = 0
    for (let t = 0; t < length; t++) documentTotal += N[t]!
    rawSources.push({ name, n, N, share, observedMonths, mentions: mentionTotal, weight: options.weights[name], level: documentTotal > 0 ? mentionTotal / documentTotal : 0 })
  }
  const dropped: SkillGrid['dropped'] = []
  const sources = rawSources.filter((source) => {
    if (source.weight <= 0) return false
    if (source.observedMonths < options.minMonths) {
      if (source.observedMonths > 0) dropped.push({ name: source.name, reason: `${source.observedMonths} observed months, fewer than ${options.minMonths}` })
      return false
    }
    // a series of zeros has no level to index against (and no trend to weigh)
    if (source.mentions === 0) {
      dropped.push({ name: source.name, reason: 'no mentions in the window' })
      return false
    }
    return true
  })
  const weightSum = sources.reduce((sum, source) => sum + source.weight, 0)
  for (const source of sources) source.weight /= weightSum
  const combinedLevel = sources.reduce((sum, source) => sum + source.weight * source.level, 0)
  const combined = slabFloat64(length)
  const pooled = slabFloat64(length)
  const mentions = slabFloat64(length)
  const documents = slabFloat64(length)
  for (let t = 0; t < length; t++) {
    let value = sources.length ? 0 : Number.NaN
    let expected = 0
    for (const source of sources) {
      // S̄/s̄ first: with one source it is exactly 1 and the index is exactly the share
      value += source.weight * source.share[t]! * (combinedLevel / source.level)
      mentions[t]! += source.n[t]!
      documents[t]! += source.N[t]!
      expected += source.N[t]! * source.level
    }
    combined[t] = value
    pooled[t] = expected > 0 ? (combinedLevel * mentions[t]!) / expected : Number.NaN
  }
  return { id: input.id, label: input.label ?? input.id, firstMonth: first, length, sources, combined, combinedLevel, pooled, mentions, documents, dropped }
}

/** 'YYYY-MM' of a grid position. */
export function gridMonth(grid: SkillGrid, position: number): string {
  // one string per month for the whole run: thousands of curves keep month labels (forecast points),
  // and shared strings keep them small
  const index = grid.firstMonth + position
  const slot = index - LABEL_BASE
  if (slot >= 0 && slot < monthLabels.length) return (monthLabels[slot] ??= monthLabel(index))
  return monthLabel(index)
}

/** month labels by month index from year 1900 to 2199 (filled on demand) */
const LABEL_BASE = 1900 * 12
const monthLabels: (string | undefined)[] = new Array<string | undefined>(300 * 12).fill(undefined)

const labelCache = new Map<string, readonly string[]>()

/**
 * The grid's month labels, shared between all skills with the same window (a run fits thousands of
 * skills over the same months; one array serves them all). Do not modify the returned array.
 *
 * @example
 * ```ts
 * gridMonths(grid)[0] // => first month of the window, e.g. '2023-01'
 * ```
 */
export function gridMonths(grid: SkillGrid): readonly string[] {
  const key = `${grid.firstMonth}:${grid.length}`
  let labels = labelCache.get(key)
  if (!labels) {
    if (labelCache.size > 64) labelCache.clear()
    labels = Object.freeze(Array.from({ length: grid.length }, (_, t) => monthLabel(grid.firstMonth + t)))
    labelCache.set(key, labels)
  }
  return labels
}
