/**
 * @module demo/courses
 * Fernhollow's course catalogue (about 150 courses): heavy on skills whose demand is now falling,
 * light on emerging ones. Most courses are tagged with skill ids or labels; some are untagged so
 * that their skills must be mapped from the title. Enrolments over the last twelve months follow the
 * internal demand for the course's skill (falling for declining skills, rising for rising ones).
 */
import { parseAsOf, isoDate } from './calendar.ts'
import { FAMILY_NAMES, GIVEN_NAMES, ROLES } from './org.ts'
import { Rng } from './prng.ts'
import { REQUEST_LAG_MONTHS } from './requests.ts'
import { demoSkills, shareAt, type DemoSkill } from './skills.ts'

export interface CourseRow {
  course_id: string
  title: string
  skills: string
  last_reviewed: string
  enrollments_12m: number
  owner: string
  enrollments_prev_12m: number
}

/** Courses per planted skill (the rest of the catalogue covers background skills, one course each). */
const PLANTED_COURSES: Record<string, number> = {
  'prompt-engineering': 1, kubernetes: 3, terraform: 2, mlops: 1, finops: 1, typescript: 2, 'cognitive-flexibility': 1, 'data-privacy': 2,
  python: 4, sql: 4, java: 3, linux: 2, go: 1, 'microsoft-excel': 4, communication: 3, negotiation: 2, 'project-management': 3,
  'stakeholder-management': 2, 'critical-thinking': 1, 'emotional-intelligence': 1,
  hadoop: 3, angularjs: 2, jquery: 2, perl: 2, 'manual-testing': 3, 'vmware-vsphere': 2, php: 3,
  'adobe-flash': 2, silverlight: 1, 'visual-basic-6': 2, jenkins: 2, 'soap-web-services': 2,
}

export const COURSE_TITLES: readonly string[] = [
  '{P} Fundamentals', 'Practical {P}', 'Advanced {P}', 'Getting Started with {P}', '{P} in Practice', 'Introduction to {P}',
  '{P}: Beyond the Basics', '{P} Masterclass', '{P} for {R}s', 'Hands-on {P} Lab',
]

const DAY = 86_400_000

/** Generates the catalogue for a demo period of `months` months ending at `asOf`. */
export function generateCourses(seed: number, months: number, asOf: string, target = 150): CourseRow[] {
  const rng = Rng.stream(seed, 'courses')
  const skills = demoSkills().filter((s) => s.kind !== 'invented')
  const end = parseAsOf(asOf)
  const endMs = Date.UTC(end.year, end.month - 1, end.day, 12)
  const owners = rng.sample(GIVEN_NAMES.flatMap((g) => FAMILY_NAMES.map((f) => `${g} ${f}`)), 22)
  const plan: DemoSkill[] = []
  for (const s of skills) for (let i = 0; i < (PLANTED_COURSES[s.id] ?? 0); i++) plan.push(s)
  const background = skills.filter((s) => s.kind === 'background')
  plan.push(...rng.sample(background, Math.max(0, target - plan.length)))

  // mean internal share of the last twelve months over the twelve before (internal demand trails external)
  const ratio = (s: DemoSkill) => {
    const mean = (from: number) => {
      let sum = 0
      for (let t = from; t < from + 12; t++) sum += shareAt(s.shape, s.baseShare, t - REQUEST_LAG_MONTHS, months)
      return sum / 12
    }
    return mean(months - 12) / Math.max(1e-9, mean(months - 24))
  }
  const used = new Map<string, number>()
  return plan.map((s, i): CourseRow => {
    // roles whose names carry a skill label (Project Manager) stay out of titles, or the title would name that skill too
    const named = ROLES.filter((r) => r.implied.length === 0)
    const fitting = s.roles === 'all' ? named : named.filter((r) => (s.roles as readonly string[]).includes(r.key))
    const roles = fitting.length ? fitting : named
    let template = rng.pick(COURSE_TITLES)
    // one title per skill and template; the "for <role>s" form needs a role
    for (let tries = 0; used.has(`${s.id}|${template}`) && tries < 20; tries++) template = rng.pick(COURSE_TITLES)
    used.set(`${s.id}|${template}`, 1)
    const title = template.replace('{P}', s.solo).replace('{R}', rng.pick(roles).name)
    const second = rng.chance(0.2) ? rng.pick(skills.filter((o) => o.id !== s.id && o.kind === 'background' && o.group === s.group)) : null
    const tagRoll = rng.next()
    const tags = tagRoll < 0.6 ? [s.id, ...(second ? [second.id] : [])] : tagRoll < 0.85 ? [s.phrases[0]!, ...(second ? [second.phrases[0]!] : [])] : []
    const old = s.shape.kind === 'declining' || s.shape.kind === 'fading' || s.shape.kind === 'change'
    const ageDays = old ? rng.between(700, 2200) : rng.between(30, 1100)
    const prev = Math.max(3, Math.round(Math.exp(rng.normal(3.8, 0.6))))
    const current = Math.round(Math.min(prev * 5 + 20, prev * ratio(s) * Math.exp(rng.normal(0, 0.1))))
    return {
      course_id: `FC-${String(101 + i)}`,
      title,
      skills: tags.join('|'),
      last_reviewed: rng.chance(0.05) ? '' : isoDate(endMs - ageDays * DAY),
      enrollments_12m: current,
      owner: rng.pick(owners),
      enrollments_prev_12m: prev,
    }
  })
}
