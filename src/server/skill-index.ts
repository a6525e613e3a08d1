/**
 * @module server/skill-index
 * The overview's in-memory index of every skill's sort and filter fields. Sorting 20,000 skills in
 * SQL means reading 20,000 wide curves and plan rows per request (hundreds of milliseconds); the
 * index reads them once per data change (dataStamp), then each request filters, sorts and cuts a
 * page in memory in a few milliseconds and fetches only that page's full rows.
 *
 * Sort orders without a role filter are computed once per index and reused. Values missing in the
 * sort column come last in either direction; ties fall back to the need rank, then the id.
 */
import type { Db } from '../db/connection.ts'
import { allCoverage, dataStamp, demandFor, demandMonths, needRoleRanks, roleSkillIds, skillKeys, teamSkillIds, type DataStamp, type SkillKeyRow } from '../db/dashboard.ts'
import { DEFAULT_GRACE_MS, stillFresh } from './freshness.ts'
import { coverageBySkill, figureFor } from './privacy.ts'

export const OVERVIEW_SORTS = ['rank', 'label', 'state', 'growth', 'halflife', 'share', 'coverage', 'score'] as const
export type OverviewSort = (typeof OVERVIEW_SORTS)[number]

/** Lifecycle states in display order; states the curves stage adds later sort after these. */
export const STATE_ORDER: readonly string[] = ['emerging', 'rising', 'steady', 'declining', 'fading']

export interface OverviewFilter {
  role?: string
  team?: string
  type?: string
  /** a state, or 'none' for skills without a curve */
  state?: string
  search?: string
}

export interface OverviewSelection {
  total: number
  /** ids of the requested page, in order */
  ids: string[]
}

interface Entry extends SkillKeyRow {
  labelKey: string
  idKey: string
  stateKey: number | null
}

type Value = (e: Entry) => number | string | null

export class SkillIndex {
  readonly entries: Entry[]
  private readonly orders = new Map<string, Entry[]>()
  private coverage: ReturnType<typeof coverageBySkill> | null = null
  /** external monthly shares per skill, filled as pages ask for them */
  private readonly trendCache = new Map<string, (number | null)[]>()
  private months: string[] | null = null
  private roleRanks: ReturnType<typeof needRoleRanks> | null = null

  constructor(
    private readonly db: Db,
    readonly stamp: DataStamp,
    readonly minGroup: number,
    readonly builtAt: number = Date.now(),
  ) {
    // explicit object literals (one hidden class) rather than spread rows: property access in the
    // per-request filter and sort stays fast
    this.entries = skillKeys(db).map(
      (k): Entry => ({
        id: k.id,
        label: k.label,
        type: k.type,
        state: k.state,
        growth: k.growth,
        halfLife: k.halfLife,
        share: k.share,
        rank: k.rank,
        score: k.score,
        labelKey: k.label.toLowerCase(),
        idKey: k.id.toLowerCase(),
        stateKey: k.state === null ? null : STATE_ORDER.includes(k.state) ? STATE_ORDER.indexOf(k.state) : STATE_ORDER.length,
      }),
    )
  }

  /** Coverage figures of every skill, as displayed (suppressed ones are null). */
  coverageFigures(): ReturnType<typeof coverageBySkill> {
    return (this.coverage ??= coverageBySkill(allCoverage(this.db), this.minGroup))
  }

  /** Monthly external shares of the given skills on a common month axis (cached per index). */
  trends(ids: readonly string[]): Map<string, (number | null)[]> {
    const missing = ids.filter((id) => !this.trendCache.has(id))
    if (missing.length) {
      const months = (this.months ??= demandMonths(this.db, 'external'))
      const at = new Map(months.map((m, i) => [m, i]))
      const series = new Map<string, (number | null)[]>(missing.map((id) => [id, months.map(() => null)]))
      for (const p of demandFor(this.db, missing, 'external')) {
        const i = at.get(p.month)
        if (i !== undefined) series.get(p.concept_id)![i] = p.total > 0 ? p.n / p.total : 0
      }
      for (const [id, values] of series) this.trendCache.set(id, values.some((v) => v !== null) ? values : [])
    }
    return new Map(ids.map((id) => [id, this.trendCache.get(id)!]))
  }

  private ranksFor(role: string): Map<string, { rank: number | null; score: number | null }> {
    return (this.roleRanks ??= needRoleRanks(this.db)).get(role) ?? new Map()
  }

  private summary: { counts: { state: string | null; count: number }[]; types: string[]; states: string[] } | null = null

  private summarise(): NonNullable<SkillIndex['summary']> {
    if (this.summary) return this.summary
    const counts = new Map<string | null, number>()
    const types = new Set<string>()
    for (const e of this.entries) {
      counts.set(e.state, (counts.get(e.state) ?? 0) + 1)
      types.add(e.type)
    }
    return (this.summary = {
      counts: [...counts].map(([state, count]) => ({ state, count })).sort((a, b) => b.count - a.count || String(a.state).localeCompare(String(b.state))),
      types: [...types].sort(),
      states: [...counts.keys()].filter((x): x is string => x !== null).sort(),
    })
  }

  /** Skills per lifecycle state (null: not fitted), most common first. */
  stateCounts(): { state: string | null; count: number }[] {
    return this.summarise().counts
  }

  types(): string[] {
    return this.summarise().types
  }

  states(): string[] {
    return this.summarise().states
  }

  private value(sort: OverviewSort, role: string | undefined): Value {
    const roleRanks = role ? this.ranksFor(role) : null
    switch (sort) {
      case 'rank':
        return roleRanks ? (e) => roleRanks.get(e.id)?.rank ?? null : (e) => e.rank
      case 'score':
        return roleRanks ? (e) => roleRanks.get(e.id)?.score ?? null : (e) => e.score
      case 'label':
        return (e) => e.labelKey
      case 'state':
        return (e) => e.stateKey
      case 'growth':
        return (e) => e.growth
      case 'halflife':
        return (e) => e.halfLife
      case 'share':
        return (e) => e.share
      case 'coverage': {
        const cov = this.coverageFigures()
        return (e) => figureFor(cov.get(e.id), role)?.coverage ?? null
      }
    }
  }

  private sorted(list: Entry[], sort: OverviewSort, dir: 'asc' | 'desc', role: string | undefined): Entry[] {
    const v = this.value(sort, role)
    const rank = this.value('rank', role)
    const sign = dir === 'desc' ? -1 : 1
    const keyed = list.map((e) => ({ e, k: v(e), r: rank(e) }))
    keyed.sort((a, b) => {
      if (a.k !== b.k) {
        if (a.k === null) return 1
        if (b.k === null) return -1
        return sign * (a.k < b.k ? -1 : 1)
      }
      if (a.r !== b.r) {
        if (a.r === null) return 1
        if (b.r === null) return -1
        return (a.r as number) - (b.r as number)
      }
      return a.e.idKey < b.e.idKey ? -1 : a.e.idKey > b.e.idKey ? 1 : 0
    })
    return keyed.map((x) => x.e)
  }

  /** All skills in one order, computed once per index. */
  private order(sort: OverviewSort, dir: 'asc' | 'desc'): Entry[] {
    const key = `${sort}:${dir}`
    let order = this.orders.get(key)
    if (!order) this.orders.set(key, (order = this.sorted(this.entries, sort, dir, undefined)))
    return order
  }

  /** The matching skills in order, cut to one page. */
  select(filter: OverviewFilter, sort: OverviewSort, dir: 'asc' | 'desc', offset: number, limit: number): OverviewSelection {
    let allowed: Set<string> | null = null
    const narrow = (ids: Iterable<string>) => {
      const next = new Set(ids)
      allowed = allowed === null ? next : new Set([...allowed].filter((id) => next.has(id)))
    }
    if (filter.role) narrow([...roleSkillIds(this.db, filter.role), ...this.ranksFor(filter.role).keys()])
    if (filter.team) narrow(teamSkillIds(this.db, filter.team))
    const search = filter.search?.toLowerCase()
    const keep = (e: Entry): boolean =>
      (allowed === null || (allowed as Set<string>).has(e.id)) &&
      (!filter.type || e.type === filter.type) &&
      (!filter.state || (filter.state === 'none' ? e.state === null : e.state === filter.state)) &&
      (!search || e.labelKey.includes(search) || e.idKey.includes(search))
    const unfiltered = !filter.role && !filter.team && !filter.type && !filter.state && !search
    let ordered: Entry[]
    if (unfiltered) {
      const order = this.order(sort, dir)
      return { total: order.length, ids: order.slice(offset, offset + limit).map((e) => e.id) }
    } else if (filter.role) {
      ordered = this.sorted(this.entries.filter(keep), sort, dir, filter.role)
    } else {
      ordered = this.order(sort, dir).filter(keep)
    }
    return { total: ordered.length, ids: ordered.slice(offset, offset + limit).map((e) => e.id) }
  }
}

const INDEXES = new WeakMap<Db, SkillIndex>()

/**
 * The current index of a database, rebuilt when the data changed (this connection's writes at once,
 * other processes' commits after the grace period: see server/freshness).
 */
export function skillIndex(db: Db, minGroup: number, graceMs = DEFAULT_GRACE_MS): SkillIndex {
  const stamp = dataStamp(db)
  const current = INDEXES.get(db)
  if (current && current.minGroup === minGroup && stillFresh(current.stamp, current.builtAt, stamp, Date.now(), graceMs)) return current
  const fresh = new SkillIndex(db, stamp, minGroup)
  INDEXES.set(db, fresh)
  return fresh
}
