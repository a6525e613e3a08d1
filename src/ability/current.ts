/**
 * @module ability/current
 * Which ability counts for a person and skill, and how much to trust it today.
 *
 * - Imported estimates (made elsewhere) and estimates computed here from responses may both exist;
 *   the newer assessment wins (on equal dates the one computed here wins, since its inputs are known).
 * - An ability older than `staleAfterDays` is stale: its SE is multiplied by `seInflation` (≥ 1) and
 *   it is flagged, so coverage treats it as less certain instead of dropping or trusting it. A single
 *   factor keeps the rule easy to state; people's skills drift, and an old measurement says less
 *   about today (common practice, no source).
 */

export type AbilityOrigin = 'import' | 'estimate'

/** An ability as stored. */
export interface StoredAbility {
  personId: string
  skillId: string
  origin: AbilityOrigin
  theta: number
  se: number
  /** ISO 8601 date or date-time of the assessment */
  assessedAt: string
  method?: string | null
  note?: string | null
}

/** The ability that counts, with its staleness applied. */
export interface CurrentAbility extends StoredAbility {
  /** SE after inflation (equals seReported unless stale) */
  se: number
  seReported: number
  stale: boolean
  ageDays: number
}

export interface StalenessOptions {
  staleAfterDays: number
  seInflation: number
}

const DAY_MS = 86_400_000

function timeOf(iso: string, what: string): number {
  const t = Date.parse(iso)
  if (Number.isNaN(t)) throw new RangeError(`${what}: not an ISO 8601 date: "${iso}"`)
  return t
}

/**
 * Pick, per person and skill, the newest ability (ties: 'estimate' over 'import').
 *
 * @example pickNewest([imported2025, estimated2024]) // => [imported2025]
 */
export function pickNewest(rows: readonly StoredAbility[]): StoredAbility[] {
  const chosen = new Map<string, { row: StoredAbility; time: number }>()
  for (const row of rows) {
    const key = `${row.personId}\u0000${row.skillId}`
    const time = timeOf(row.assessedAt, `ability of ${row.personId} in ${row.skillId}`)
    const held = chosen.get(key)
    if (!held || time > held.time || (time === held.time && row.origin === 'estimate' && held.row.origin === 'import')) {
      chosen.set(key, { row, time })
    }
  }
  return [...chosen.values()].map((entry) => entry.row)
}

/**
 * Apply the staleness rule at time `now`.
 *
 * @throws RangeError for an unparseable date, staleAfterDays ≤ 0 or seInflation < 1
 * @example applyStaleness({ ..., se: 0.3, assessedAt: '2020-01-01' }, new Date('2024-01-01'), { staleAfterDays: 730, seInflation: 1.5 })
 * // => { ..., se: 0.45, seReported: 0.3, stale: true, ageDays: 1461 }
 */
export function applyStaleness(row: StoredAbility, now: Date, options: StalenessOptions): CurrentAbility {
  if (!(options.staleAfterDays > 0)) throw new RangeError(`staleAfterDays must be > 0 (got ${options.staleAfterDays})`)
  if (!(options.seInflation >= 1)) throw new RangeError(`seInflation must be >= 1 (got ${options.seInflation})`)
  const ageDays = (now.getTime() - timeOf(row.assessedAt, `ability of ${row.personId} in ${row.skillId}`)) / DAY_MS
  const stale = ageDays > options.staleAfterDays
  return { ...row, se: stale ? row.se * options.seInflation : row.se, seReported: row.se, stale, ageDays }
}

/** pickNewest then applyStaleness, keyed by person then skill. */
export function currentAbilities(rows: readonly StoredAbility[], now: Date, options: StalenessOptions): Map<string, Map<string, CurrentAbility>> {
  const out = new Map<string, Map<string, CurrentAbility>>()
  for (const row of pickNewest(rows)) {
    let bySkill = out.get(row.personId)
    if (!bySkill) out.set(row.personId, (bySkill = new Map()))
    bySkill.set(row.skillId, applyStaleness(row, now, options))
  }
  return out
}
