/**
 * @module ability/suppress
 * Small-group suppression for aggregate displays of person-level results.
 *
 * A group whose result rests on fewer than `minGroupSize` people (default 5) is shown without its
 * figures. Suppressing one group is not enough when a total is also shown: total minus the other
 * groups gives it back. So within each family (e.g. the roles that require one skill, with the
 * skill's all-roles total) the suppressed groups must together hold either nobody or at least
 * `minGroupSize` people; if not, the next smallest groups are suppressed as well (complementary
 * suppression), and if that runs out the total is suppressed too. Threshold rules of this kind are
 * the usual practice of statistical disclosure control (common practice, no source; see e.g.
 * https://en.wikipedia.org/wiki/Statistical_disclosure_control).
 */

export const DEFAULT_MIN_GROUP_SIZE = 5

/** Why a group's figures are hidden. */
export type SuppressionReason = 'small-group' | 'complementary' | null

export interface Suppressible {
  /** people the figures rest on */
  size: number
  /** rows with the same family key and no total flag are parts of the family's total */
  family: string
  /** the family's total row */
  isTotal?: boolean
}

/**
 * Decide which rows to suppress; returns one reason (or null) per row, in input order.
 *
 * @example suppressionReasons([{ size: 3, family: 's' }, { size: 9, family: 's' }, { size: 12, family: 's', isTotal: true }])
 * // => ['small-group', 'complementary', null]
 */
export function suppressionReasons(rows: readonly Suppressible[], minGroupSize = DEFAULT_MIN_GROUP_SIZE): SuppressionReason[] {
  if (!Number.isInteger(minGroupSize) || minGroupSize < 1) throw new RangeError(`minGroupSize must be a whole number >= 1 (got ${minGroupSize})`)
  const reasons: SuppressionReason[] = rows.map((row) => (row.size < minGroupSize ? 'small-group' : null))
  const families = new Map<string, number[]>()
  rows.forEach((row, i) => {
    const list = families.get(row.family) ?? []
    list.push(i)
    families.set(row.family, list)
  })
  for (const members of families.values()) {
    const total = members.find((i) => rows[i].isTotal)
    if (total === undefined || reasons[total] !== null) continue
    const parts = members.filter((i) => !rows[i].isTotal)
    const hiddenSize = () => parts.filter((i) => reasons[i] !== null).reduce((s, i) => s + rows[i].size, 0)
    const hiddenCount = () => parts.filter((i) => reasons[i] !== null).length
    // a lone suppressed part is recoverable from the total whatever its size; so is a hidden sum < min
    while (hiddenCount() > 0 && (hiddenCount() === 1 || hiddenSize() < minGroupSize)) {
      const next = parts.filter((i) => reasons[i] === null).sort((x, y) => rows[x].size - rows[y].size)[0]
      if (next === undefined) {
        reasons[total] = 'complementary'
        break
      }
      reasons[next] = 'complementary'
    }
  }
  return reasons
}

/**
 * Null out the given fields of rows whose group is too small, and mark them.
 *
 * @example suppressFields(rows, (r) => r.assessed, ['coverage', 'expectedGap'])
 */
export function suppressFields<T extends object, K extends keyof T>(
  rows: readonly T[],
  describe: (row: T) => Suppressible,
  fields: readonly K[],
  minGroupSize = DEFAULT_MIN_GROUP_SIZE,
): Array<Omit<T, K> & { [P in K]: T[P] | null } & { suppressed: SuppressionReason }> {
  const reasons = suppressionReasons(rows.map(describe), minGroupSize)
  return rows.map((row, i) => {
    const copy: Record<string, unknown> = { ...row, suppressed: reasons[i] }
    if (reasons[i] !== null) for (const field of fields) copy[field as string] = null
    return copy as Omit<T, K> & { [P in K]: T[P] | null } & { suppressed: SuppressionReason }
  })
}
