/**
 * @module ability/coverage-table
 * Coverage for every role requirement and, per skill, over all roles requiring it, from people,
 * role requirements and current abilities. Pure: the stage stores the per-role rows, the report
 * adds the per-skill totals and (with an explicit flag) the person-level rows.
 */
import { meetProbability, summariseCoverage, type CoverageSummary, type PersonRequirement } from './coverage.ts'
import type { CurrentAbility } from './current.ts'

export interface PersonInput {
  personId: string
  role: string
}

export interface RequirementInput {
  role: string
  skillId: string
  requiredTheta: number
}

/** Role '*' marks a skill's total over all roles requiring it. */
export const ALL_ROLES = '*'

export interface CoverageRow extends CoverageSummary {
  skillId: string
  role: string
  /** null on a skill total whose roles require different levels */
  requiredTheta: number | null
}

export interface PersonCoverageRow {
  personId: string
  role: string
  skillId: string
  requiredTheta: number
  theta: number | null
  /** SE used (inflated when stale) */
  se: number | null
  seReported: number | null
  stale: boolean | null
  origin: string | null
  assessedAt: string | null
  /** Φ((θ̂ − θreq)/SE); null when never assessed */
  pMeet: number | null
}

/**
 * Build coverage rows. People with a role that states no requirement are not counted anywhere.
 *
 * @example buildCoverage(people, requirements, abilities).byRole[0] // => { skillId, role, headcount, ... }
 */
export function buildCoverage(
  people: readonly PersonInput[],
  requirements: readonly RequirementInput[],
  abilities: ReadonlyMap<string, ReadonlyMap<string, CurrentAbility>>,
  level = 0.95,
): { byRole: CoverageRow[]; bySkill: CoverageRow[]; people: PersonCoverageRow[] } {
  const peopleByRole = new Map<string, PersonInput[]>()
  for (const person of people) {
    const list = peopleByRole.get(person.role) ?? []
    list.push(person)
    peopleByRole.set(person.role, list)
  }
  const byRole: CoverageRow[] = []
  const personRows: PersonCoverageRow[] = []
  const perSkill = new Map<string, { rows: PersonRequirement[]; levels: Set<number> }>()
  const sorted = [...requirements].sort((x, y) => (x.skillId === y.skillId ? x.role.localeCompare(y.role) : x.skillId.localeCompare(y.skillId)))
  for (const requirement of sorted) {
    const members = peopleByRole.get(requirement.role) ?? []
    const rows: PersonRequirement[] = members.map((person) => {
      const ability = abilities.get(person.personId)?.get(requirement.skillId) ?? null
      personRows.push({
        personId: person.personId,
        role: person.role,
        skillId: requirement.skillId,
        requiredTheta: requirement.requiredTheta,
        theta: ability?.theta ?? null,
        se: ability?.se ?? null,
        seReported: ability?.seReported ?? null,
        stale: ability ? ability.stale : null,
        origin: ability?.origin ?? null,
        assessedAt: ability?.assessedAt ?? null,
        pMeet: ability ? meetProbability(ability.theta, ability.se, requirement.requiredTheta) : null,
      })
      return {
        personId: person.personId,
        requiredTheta: requirement.requiredTheta,
        ability: ability ? { theta: ability.theta, se: ability.se, stale: ability.stale } : null,
      }
    })
    byRole.push({ skillId: requirement.skillId, role: requirement.role, requiredTheta: requirement.requiredTheta, ...summariseCoverage(rows, level) })
    const total = perSkill.get(requirement.skillId) ?? { rows: [], levels: new Set<number>() }
    total.rows.push(...rows)
    total.levels.add(requirement.requiredTheta)
    perSkill.set(requirement.skillId, total)
  }
  const bySkill: CoverageRow[] = [...perSkill.entries()].map(([skillId, total]) => ({
    skillId,
    role: ALL_ROLES,
    requiredTheta: total.levels.size === 1 ? [...total.levels][0] : null,
    ...summariseCoverage(total.rows, level),
  }))
  return { byRole, bySkill, people: personRows }
}
