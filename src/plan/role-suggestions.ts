/**
 * @module plan/role-suggestions
 * Role requirements not yet written down: skills that postings for a role's occupation increasingly
 * ask for and that the role's requirements lack.
 *
 * The postings are read as counts per (month, title, occupation): how many postings, and how many of
 * them mention each concept directly (db/title-months.ts keeps them between runs); every posting of
 * a title and occupation matches the same roles, so the counts give the same tests as the postings.
 *
 * Postings are matched to a role by `plan.roleOccupations` (role -> keywords or occupationalCategory
 * codes; default: the role's own name): a keyword matches an occupation exactly or occurs as whole
 * words in the title or occupation, case-insensitive. For each skill the role does not require, the
 * share of the role's postings asking for it in the recent window (p1 = n1/N1) is compared with the
 * window of the same length just before (p0 = n0/N0) by a one-sided two-proportion z-test:
 *   z = (p1 − p0)/√(p̂(1 − p̂)(1/N1 + 1/N0)), p̂ = (n1 + n0)/(N1 + N0), p-value = 1 − Φ(z).
 * Reference: https://en.wikipedia.org/wiki/Two-proportion_Z-test
 * The p-values of every (role, skill) pair tested in a run are adjusted together by Benjamini–Hochberg
 * (many roles × skills are tested at once). A skill is suggested when N1 ≥ minPostings, p1 ≥ minShare,
 * p1 > p0, and either the increase is significant after adjustment (adjusted p ≤ alpha) or the
 * skill's own demand curve is emerging or rising and its share in the role's postings rose by at
 * least `suggestions.minRise` (relative).
 */
import { benjaminiHochberg } from '../stats/benjamini-hochberg.ts'
import { normalSurvival } from '../stats/normal-distribution.ts'
import type { TitleCounts } from '../db/title-months.ts'
import type { PlanConfig } from './config.ts'
import { RISING_STATES, type SkillCurve } from './curve-model.ts'

export interface RoleSuggestion {
  role: string
  skillId: string
  label: string
  recentPostings: number
  recentMentions: number
  recentShare: number
  earlierPostings: number
  earlierMentions: number
  earlierShare: number | null
  pValue: number | null
  /** Benjamini–Hochberg adjusted over every (role, skill) test of the run */
  pAdjusted: number | null
  state: string | null
  reason: string
}

/** 'YYYY-MM' shifted by `delta` months. */
export function addMonths(month: string, delta: number): string {
  const m = /^(\d{4})-(\d{2})$/.exec(month)
  if (!m) throw new Error(`addMonths requires a YYYY-MM month, got "${month}"`)
  const index = Number(m[1]) * 12 + Number(m[2]) - 1 + delta
  const year = Math.floor(index / 12)
  return `${String(year).padStart(4, '0')}-${String(index - year * 12 + 1).padStart(2, '0')}`
}

function escapeRegExp(s: string): string {
  return s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')
}

/** A predicate telling whether a posting belongs to the occupation of a role. */
export function roleMatcher(keywords: readonly string[]): (doc: { title: string; occupation: string | null }) => boolean {
  const words = keywords.map((k) => k.trim()).filter(Boolean)
  const exact = new Set(words.map((k) => k.toLowerCase()))
  const res = words.map((k) => new RegExp(`(?<![\\p{L}\\p{N}])${escapeRegExp(k)}(?![\\p{L}\\p{N}])`, 'iu'))
  return (doc) => {
    const occ = doc.occupation?.trim() ?? ''
    if (occ && exact.has(occ.toLowerCase())) return true
    return res.some((re) => re.test(doc.title) || (occ !== '' && re.test(occ)))
  }
}

/**
 * The indices (into `roles`) of the roles a title and occupation match (roleMatcher with each
 * role's configured occupations), remembered per distinct title and occupation: the kept counts
 * repeat titles month after month.
 */
export function rolesMatching(roles: readonly string[], cfg: Pick<PlanConfig, 'roleOccupations'>): (title: string, occupation: string | null) => readonly number[] {
  const matchers = roles.map((role) => roleMatcher(cfg.roleOccupations[role] ?? [role]))
  const seen = new Map<string, number[]>()
  return (title, occupation) => {
    const key = `${title}\u0000${occupation ?? ''}`
    let hits = seen.get(key)
    if (!hits) {
      const doc = { title, occupation }
      hits = []
      for (const [i, matches] of matchers.entries()) if (matches(doc)) hits.push(i)
      seen.set(key, hits)
    }
    return hits
  }
}

/** Whether a title and occupation match any of the roles (only the matching kept counts are decoded). */
export function anyRoleMatcher(roles: readonly string[], cfg: Pick<PlanConfig, 'roleOccupations'>): (title: string, occupation: string | null) => boolean {
  const matching = rolesMatching(roles, cfg)
  return (title, occupation) => matching(title, occupation).length > 0
}

/** One-sided p-value of p1 > p0 (null when the pooled share is 0 or 1). */
export function twoProportionP(n1: number, total1: number, n0: number, total0: number): number | null {
  if (total1 <= 0 || total0 <= 0) return null
  const pooled = (n1 + n0) / (total1 + total0)
  if (pooled <= 0 || pooled >= 1) return null
  const z = (n1 / total1 - n0 / total0) / Math.sqrt(pooled * (1 - pooled) * (1 / total1 + 1 / total0))
  return normalSurvival(z)
}

export interface SuggestionInput {
  roles: readonly string[]
  requirements: ReadonlyMap<string, ReadonlySet<string>>
  /** the postings of both windows, counted per (month, title, occupation) */
  titles: TitleCounts
  /** the latest posting month; the recent window ends there */
  latestMonth: string | null
  curves: ReadonlyMap<string, SkillCurve>
  labels: ReadonlyMap<string, string>
}

/** Suggested requirements for every role, strongest increase first within a role. */
export function suggestRequirements(input: SuggestionInput, cfg: Pick<PlanConfig, 'roleOccupations' | 'suggestions'>): RoleSuggestion[] {
  if (!input.latestMonth) return []
  const s = cfg.suggestions
  const recentStart = addMonths(input.latestMonth, -(s.recentMonths - 1))
  const earlierStart = addMonths(recentStart, -s.recentMonths)
  // every test this run makes: a skill the role lacks, seen in the role's recent postings
  const tests: Omit<RoleSuggestion, 'reason' | 'pAdjusted'>[] = []
  // each role's postings of both windows, in one pass over the counts, summed per concept index;
  // the roles a title and occupation match are found once for all its months
  const size = input.titles.concepts.length
  const matching = rolesMatching(input.roles, cfg)
  const windows: ({ recentTotal: number; earlierTotal: number; recent: Uint32Array; earlier: Uint32Array } | undefined)[] = input.roles.map(() => undefined)
  for (const group of input.titles.rows) {
    if (group.month < earlierStart || group.month > input.latestMonth) continue
    const isRecent = group.month >= recentStart
    for (const i of matching(group.title, group.occupation)) {
      const w = (windows[i] ??= { recentTotal: 0, earlierTotal: 0, recent: new Uint32Array(size), earlier: new Uint32Array(size) })
      if (isRecent) w.recentTotal += group.postings
      else w.earlierTotal += group.postings
      const counts = isRecent ? w.recent : w.earlier
      for (let k = 0; k < group.concepts.length; k++) counts[group.concepts[k]!]! += group.mentions[k]!
    }
  }
  for (const [i, role] of input.roles.entries()) {
    const w = windows[i]
    if (!w || w.recentTotal < s.minPostings) continue
    const required = input.requirements.get(role) ?? new Set<string>()
    const { recentTotal, earlierTotal, recent, earlier } = w
    for (let c = 0; c < size; c++) {
      const n1 = recent[c]!
      const skill = input.titles.concepts[c]
      if (n1 === 0 || skill === undefined || required.has(skill)) continue
      const n0 = earlier[c]!
      tests.push({
        role,
        skillId: skill,
        label: input.labels.get(skill) ?? skill,
        recentPostings: recentTotal,
        recentMentions: n1,
        recentShare: n1 / recentTotal,
        earlierPostings: earlierTotal,
        earlierMentions: n0,
        earlierShare: earlierTotal > 0 ? n0 / earlierTotal : null,
        pValue: twoProportionP(n1, recentTotal, n0, earlierTotal),
        state: input.curves.get(skill)?.state ?? null,
      })
    }
  }
  // many roles × skills are tested at once: control the false discovery rate across them
  const adjusted = benjaminiHochberg(tests.map((t) => t.pValue ?? Number.NaN), s.alpha).adjusted
  const out: RoleSuggestion[] = []
  tests.forEach((t, i) => {
    const p1 = t.recentShare
    const p0 = t.earlierShare
    if (p1 < s.minShare || (p0 !== null && p1 <= p0)) return
    const pAdjusted = Number.isNaN(adjusted[i]!) ? null : adjusted[i]!
    const curve = input.curves.get(t.skillId)
    const significant = pAdjusted !== null && pAdjusted <= s.alpha
    const risingCurve = curve !== undefined && curve.evidenced && RISING_STATES.includes(curve.state) && (p0 === null || p1 >= (1 + s.minRise) * p0)
    if (!significant && !risingCurve) return
    const pct = (x: number) => `${(100 * x).toFixed(0)}%`
    const reason = [
      `${pct(p1)} of the last ${s.recentMonths} months' ${t.recentPostings} postings for this role ask for it`,
      p0 === null ? 'no earlier postings to compare' : `against ${pct(p0)} of ${t.earlierPostings} the ${s.recentMonths} months before`,
      significant
        ? `a significant increase (one-sided p ${fmtP(t.pValue!)}, ${fmtP(pAdjusted!)} after the false-discovery-rate adjustment)`
        : `its demand is ${curve!.state} across all postings`,
    ].join('; ')
    out.push({ ...t, pAdjusted, reason })
  })
  const rise = (x: RoleSuggestion) => x.recentShare - (x.earlierShare ?? 0)
  return out.sort((a, b) => (a.role < b.role ? -1 : a.role > b.role ? 1 : rise(b) - rise(a) || (a.skillId < b.skillId ? -1 : 1)))
}

function fmtP(p: number): string {
  return p < 0.001 ? '< 0.001' : p.toFixed(3)
}
