/**
 * @module curves/months
 * Calendar months as 'YYYY-MM' strings and as whole-number indices (year · 12 + month − 1), so
 * that series can be aligned and differenced without date arithmetic.
 */

const MONTH_PATTERN = /^(\d{4})-(0[1-9]|1[0-2])$/

/** Whether a string is a month as YYYY-MM. */
export function isMonth(month: string): boolean {
  return MONTH_PATTERN.test(month)
}

/**
 * Month index of a 'YYYY-MM' string.
 *
 * @throws RangeError naming the bad value
 * @example
 * ```ts
 * monthIndex('2024-03') // => 24290
 * ```
 */
export function monthIndex(month: string): number {
  // a run parses the same few dozen month strings for every skill
  const cached = indexCache.get(month)
  if (cached !== undefined) return cached
  const match = MONTH_PATTERN.exec(month)
  if (!match) throw new RangeError(`month must be YYYY-MM, got "${month}"`)
  const index = Number(match[1]) * 12 + Number(match[2]) - 1
  if (indexCache.size > 10_000) indexCache.clear()
  indexCache.set(month, index)
  return index
}

const indexCache = new Map<string, number>()

/**
 * 'YYYY-MM' string of a month index.
 *
 * @example
 * ```ts
 * monthLabel(24290) // => '2024-03'
 * ```
 */
export function monthLabel(index: number): string {
  const year = Math.floor(index / 12)
  const month = index - year * 12 + 1
  return `${String(year).padStart(4, '0')}-${String(month).padStart(2, '0')}`
}

/**
 * Month of year, 0 (January) to 11 (December), of a month index.
 *
 * @example
 * ```ts
 * monthOfYear(monthIndex('2024-03')) // => 2
 * ```
 */
export function monthOfYear(index: number): number {
  return ((index % 12) + 12) % 12
}
