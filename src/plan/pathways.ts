/**
 * @module plan/pathways
 * Reskilling pathways and candidates. A pathway leads from a declining (or fading) skill to the
 * rising (or emerging) skills most adjacent to it in postings (adjacency.ts). The candidates of a
 * role are its people strong in a declining skill, θ̂ at or above the role's requirement for it (or
 * `reskilling.strongTheta` when the role states none), who lack one or more of the pathway's rising
 * skills: no estimate, or θ̂ below the role's requirement for it (or `strongTheta`).
 */
import type { AbilityRecord, PersonRecord } from '../db/plan.ts'
import { nearest, type CoOccurrence } from './adjacency.ts'
import type { PlanConfig } from './config.ts'
import { DECLINING_STATES, RISING_STATES, halfLifeOf, type SkillCurve } from './curve-model.ts'

export interface PathwayTarget {
  id: string
  label: string
  state: string
  annualGrowth: number | null
  /** PPMI in bits or cosine, by `adjacency.method` */
  score: number
  support: number
  pmi: number | null
}

export interface Pathway {
  skillId: string
  label: string
  state: string
  halfLifeMonths: number | null
  /** postings mentioning the declining skill within the adjacency window */
  postings: number
  targets: PathwayTarget[]
}

/** For every declining skill with adjacent rising skills, its pathway (declining skills by id). */
/** The skills whose adjacency {@link buildPathways} asks for: evidenced declining and rising ones. */
export function pathwaySkills(curves: ReadonlyMap<string, SkillCurve>): Set<string> {
  return new Set([...curves.values()].filter((c) => c.evidenced && (RISING_STATES.includes(c.state) || DECLINING_STATES.includes(c.state))).map((c) => c.id))
}

export function buildPathways(co: CoOccurrence, curves: ReadonlyMap<string, SkillCurve>, labels: ReadonlyMap<string, string>, cfg: PlanConfig['adjacency']): Pathway[] {
  const rising = [...curves.values()].filter((c) => c.evidenced && RISING_STATES.includes(c.state)).map((c) => c.id)
  const out: Pathway[] = []
  const declining = [...curves.values()].filter((c) => c.evidenced && DECLINING_STATES.includes(c.state)).sort((a, b) => (a.id < b.id ? -1 : 1))
  for (const d of declining) {
    const targets = nearest(co, d.id, rising, cfg).map((n) => {
      const c = curves.get(n.id)!
      return { id: n.id, label: labels.get(n.id) ?? n.id, state: c.state, annualGrowth: c.annualGrowth, score: n.score, support: n.support, pmi: n.pmi }
    })
    if (targets.length === 0) continue
    out.push({ skillId: d.id, label: labels.get(d.id) ?? d.id, state: d.state, halfLifeMonths: halfLifeOf(d), postings: co.counts.get(d.id) ?? 0, targets })
  }
  return out
}

export interface CandidatePerson {
  personId: string
  theta: number
  lacks: string[]
}

export interface CandidateGroup {
  role: string
  decliningSkill: string
  decliningLabel: string
  /** people in the role with θ̂ at or above the threshold of the declining skill */
  strong: number
  /** of those, people lacking at least one rising skill of the pathway */
  candidates: number
  targets: { id: string; label: string; lacking: number; unassessed: number }[]
  /** person-level rows; only filled when asked for */
  people?: CandidatePerson[]
}

export interface CandidateInput {
  people: readonly PersonRecord[]
  abilities: readonly AbilityRecord[]
  /** role -> skill -> required theta */
  requirements: ReadonlyMap<string, ReadonlyMap<string, number>>
  pathways: readonly Pathway[]
}

/** The reskilling candidates per role and declining skill (groups with nobody strong are left out). */
export function findCandidates(input: CandidateInput, cfg: PlanConfig['reskilling'], withPeople: boolean): CandidateGroup[] {
  const theta = new Map<string, Map<string, number>>()
  for (const a of input.abilities) {
    let m = theta.get(a.person_id)
    if (!m) theta.set(a.person_id, (m = new Map()))
    m.set(a.skill_id, a.theta)
  }
  const byRole = new Map<string, string[]>()
  for (const p of input.people) {
    const list = byRole.get(p.role)
    if (list) list.push(p.person_id)
    else byRole.set(p.role, [p.person_id])
  }
  const out: CandidateGroup[] = []
  for (const role of [...byRole.keys()].sort()) {
    const members = byRole.get(role)!
    const reqs = input.requirements.get(role)
    const threshold = (skill: string) => reqs?.get(skill) ?? cfg.strongTheta
    for (const path of input.pathways) {
      const dThreshold = threshold(path.skillId)
      const targets = path.targets.map((t) => ({ id: t.id, label: t.label, lacking: 0, unassessed: 0 }))
      const people: CandidatePerson[] = []
      let strong = 0
      for (const person of members) {
        const mine = theta.get(person)
        const td = mine?.get(path.skillId)
        if (td === undefined || td < dThreshold) continue
        strong++
        const lacks: string[] = []
        path.targets.forEach((t, i) => {
          const tr = mine!.get(t.id)
          if (tr === undefined) {
            targets[i]!.unassessed++
            targets[i]!.lacking++
            lacks.push(t.id)
          } else if (tr < threshold(t.id)) {
            targets[i]!.lacking++
            lacks.push(t.id)
          }
        })
        if (lacks.length) people.push({ personId: person, theta: td, lacks })
      }
      if (strong === 0) continue
      const group: CandidateGroup = { role, decliningSkill: path.skillId, decliningLabel: path.label, strong, candidates: people.length, targets }
      if (withPeople) group.people = people
      out.push(group)
    }
  }
  return out
}
