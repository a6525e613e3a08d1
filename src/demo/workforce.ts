/**
 * @module demo/workforce
 * Fernhollow's people, role requirements and assessment data: item banks with 2PL parameters for
 * twenty skills, responses simulated from each person's true ability under the 2PL model, and
 * ability estimates "made elsewhere" for a few more skills (some older than two years, so stale).
 * The true abilities are written too (truth-abilities.csv) so estimation can be checked end to end.
 */
import { isoSeconds, parseAsOf } from './calendar.ts'
import { ROLES, type DemoRole } from './org.ts'
import { Rng } from './prng.ts'

/** Skills with an item bank; responses are simulated for them. */
export const ASSESSED_SKILLS: readonly string[] = [
  'python', 'sql', 'java', 'typescript', 'kubernetes', 'terraform', 'linux', 'go', 'microsoft-excel', 'project-management',
  'stakeholder-management', 'communication', 'negotiation', 'data-privacy', 'prompt-engineering', 'jenkins', 'hadoop', 'php',
  'manual-testing', 'critical-thinking',
]

/** Skills whose estimates arrive ready-made (abilities.csv); the first three were mostly assessed long ago. */
export const IMPORTED_SKILLS: readonly string[] = ['vmware-vsphere', 'perl', 'visual-basic-6', 'emotional-intelligence', 'cognitive-flexibility', 'ai-governance', 'finops', 'mlops']
const MOSTLY_OLD = new Set(['vmware-vsphere', 'perl', 'visual-basic-6'])

/** Planted shape of a skill nudges where Fernhollow stands: strong in old skills, weak in new ones. */
const ABILITY_SHIFT: Record<string, number> = {
  'prompt-engineering': -0.7, 'ai-governance': -0.6, mlops: -0.4, finops: -0.4, kubernetes: -0.2, terraform: -0.2, typescript: -0.1,
  hadoop: 0.3, jenkins: 0.2, php: 0.2, 'manual-testing': 0.3, 'vmware-vsphere': 0.3, perl: 0.2, 'visual-basic-6': 0.2,
}

export interface Person {
  id: string
  role: DemoRole
  team: string
}

export interface WorkforceData {
  people: Person[]
  /** numbers stay numbers: CSV writing neutralises text cells that start with a minus sign */
  items: { item_id: string; skill_id: string; a: number; b: number; c: null }[]
  responses: { person_id: string; item_id: string; response: number; taken_at: string }[]
  abilities: { person_id: string; skill_id: string; theta: number; se: number; assessed_at: string }[]
  trueAbilities: { person_id: string; skill_id: string; theta: number }[]
}

const DAY = 86_400_000

function round(x: number, digits: number): number {
  return Number(x.toFixed(digits))
}

function requirement(role: DemoRole, skill: string): number | null {
  const r = role.requires.find(([id]) => id === skill)
  return r ? r[1] : null
}

/** Generates the people (about `headcount` of them, in proportion to the roles' headcounts). */
export function generatePeople(seed: number, headcount: number): Person[] {
  const rng = Rng.stream(seed, 'people')
  const total = ROLES.reduce((a, r) => a + r.headcount, 0)
  const people: Person[] = []
  const roleOrder: DemoRole[] = []
  for (const role of ROLES) for (let i = 0; i < Math.max(1, Math.round((role.headcount * headcount) / total)); i++) roleOrder.push(role)
  rng.shuffle(roleOrder)
  roleOrder.forEach((role, i) => people.push({ id: `fh-${String(i + 1).padStart(5, '0')}`, role, team: rng.pick(role.teams) }))
  return people
}

/**
 * Generates item banks, simulated responses and imported estimates.
 * 2PL without the scaling constant D: P(correct) = 1 / (1 + exp(-a(theta - b))), the form of
 * Baker (2001), The Basics of Item Response Theory, 2nd ed., ch. 2 (ERIC ED458219; the ERIC number is from memory).
 */
export function generateAssessments(seed: number, people: readonly Person[], asOf: string): WorkforceData {
  const rng = Rng.stream(seed, 'assessments')
  const end = parseAsOf(asOf)
  const endMs = Date.UTC(end.year, end.month - 1, end.day, 12)
  const teamEffect = new Map<string, number>()
  for (const role of ROLES) for (const team of role.teams) teamEffect.set(`${role.key}/${team}`, rng.normal(0, 0.2))
  const trueTheta = (p: Person, skill: string) => {
    const req = requirement(p.role, skill)
    const mean = (req === null ? -0.8 : req - 0.2) + (ABILITY_SHIFT[skill] ?? 0) + teamEffect.get(`${p.role.key}/${p.team}`)!
    return mean + rng.normal(0, 0.85)
  }
  const data: WorkforceData = { people: people.slice(), items: [], responses: [], abilities: [], trueAbilities: [] }

  for (const skill of ASSESSED_SKILLS) {
    const bankSize = rng.between(20, 28)
    const bank = Array.from({ length: bankSize }, (_x, i) => {
      const a = Math.min(2.5, Math.max(0.4, Math.exp(rng.normal(0.1, 0.3))))
      const b = Math.min(3, Math.max(-3, rng.normal(0, 1)))
      return { id: `${skill}-${String(i + 1).padStart(2, '0')}`, a: Number(a.toFixed(3)), b: Number(b.toFixed(3)) }
    })
    for (const it of bank) data.items.push({ item_id: it.id, skill_id: skill, a: it.a, b: it.b, c: null })
    for (const person of people) {
      const required = requirement(person.role, skill) !== null
      if (!rng.chance(required ? 0.5 : 0.04)) continue
      const theta = trueTheta(person, skill)
      data.trueAbilities.push({ person_id: person.id, skill_id: skill, theta: round(theta, 4) })
      // one sitting somewhere in the last 30 months
      const takenAt = isoSeconds(endMs - rng.int(30 * 30) * DAY - rng.int(8 * 3600) * 1000)
      for (const it of rng.sample(bank, rng.between(10, 15))) {
        const p = 1 / (1 + Math.exp(-it.a * (theta - it.b)))
        data.responses.push({ person_id: person.id, item_id: it.id, response: rng.next() < p ? 1 : 0, taken_at: takenAt })
      }
    }
  }

  for (const skill of IMPORTED_SKILLS) {
    for (const person of people) {
      const required = requirement(person.role, skill) !== null
      if (!rng.chance(required ? 0.5 : 0.02)) continue
      const theta = trueTheta(person, skill)
      const se = 0.25 + 0.2 * rng.next()
      const ageDays = MOSTLY_OLD.has(skill) && rng.chance(0.7) ? rng.between(2 * 365 + 30, 5 * 365) : rng.int(2 * 365 - 10)
      data.trueAbilities.push({ person_id: person.id, skill_id: skill, theta: round(theta, 4) })
      data.abilities.push({
        person_id: person.id,
        skill_id: skill,
        theta: round(theta + rng.normal(0, se), 3),
        se: round(se, 3),
        assessed_at: isoSeconds(endMs - ageDays * DAY).slice(0, 10),
      })
    }
  }
  return data
}
