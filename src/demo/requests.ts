/**
 * @module demo/requests
 * Fernhollow's internal learning demand: training requests, learning-portal searches and help-desk
 * tickets, a few hundred a month. Each request mentions a skill with a chance that follows the
 * skill's external share some months earlier (staff ask for what the market asked for a while ago),
 * so the internal series echo the external shapes with a lag.
 */
import { LEARNING_SEASON, isoSeconds, randomMoment, type DemoMonth } from './calendar.ts'
import { ROLES } from './org.ts'
import { Rng, WeightedPicker } from './prng.ts'
import { demoSkills, shareAt, type DemoSkill } from './skills.ts'
import { fill, joinList } from './text.ts'

/** Months by which internal demand trails external demand. */
export const REQUEST_LAG_MONTHS = 3

/** Scale from a skill's external share to its chance of appearing in one request. */
const INTERNAL_SCALE = 0.3

export interface RequestRow {
  timestamp: string
  text: string
  channel: 'portal-search' | 'training-request' | 'help-desk'
  team: string
}

export interface RequestTruth {
  months: string[]
  requests: number[]
  /** per planted or invented skill: requests that mention it, per month */
  mentions: Record<string, number[]>
}

export const SEARCH_FORMS: readonly string[] = ['{X}', '{X} course', 'intro to {X}', '{X} for beginners', '{X} certification', 'advanced {X}', '{X} training']
export const SEARCH_GENERIC: readonly string[] = [
  'mandatory training', 'fire safety', 'expenses policy', 'induction checklist', 'certificate download', 'annual leave policy',
  'lunch and learn', 'learning days', 'course calendar', 'conference budget',
]
export const REQUEST_FORMS: readonly string[] = [
  'Could we get places on a {L} course for our team?',
  'Requesting {L} training for two people in {T}.',
  'Our team needs to build skills in {L} this quarter.',
  'Is there funding for a {L} certification?',
  'Please add a {L} workshop to the catalogue.',
  'New joiners in {T} need an introduction to {L}.',
  'Looking for a mentor or course to get better at {L}.',
]
export const REQUEST_GENERIC: readonly string[] = [
  'Requesting budget for a conference ticket.',
  'Can I carry over unused learning days to next year?',
  'Our team would like an away day with an external facilitator.',
  'Is there a reading list for new managers?',
]
export const TICKET_FORMS: readonly string[] = [
  'The {L} module in the learning portal will not load.',
  'I finished the {L} course but my certificate is missing.',
  'Videos in the {L} course have no captions.',
  'The {L} course is full; can the waiting list be opened?',
]
export const TICKET_GENERIC: readonly string[] = [
  'Cannot sign in to the learning portal.',
  'My mandatory training shows as overdue but I completed it.',
  'The portal search returns no results on my phone.',
]

/** How a phrase is typed into a search box: lower case when that cannot change its meaning. */
function searchPhrase(rng: Rng, s: DemoSkill): string {
  const p = s.solo
  return p.length > 5 && /^[A-Za-z][a-z -]+$/.test(p) && rng.chance(0.6) ? p.toLowerCase() : p
}

/**
 * Generates the requests of every month.
 * @returns the rows (in time order) and the ground truth
 */
export function generateRequests(seed: number, months: readonly DemoMonth[], perMonth: number): { rows: RequestRow[]; truth: RequestTruth } {
  const rng = Rng.stream(seed, 'requests')
  const skills = demoSkills().filter((s) => s.internal > 0)
  const M = months.length
  const teams = [...new Set(ROLES.flatMap((r) => r.teams))]
  const teamPicker = new WeightedPicker(teams, teams.map((t) => ROLES.filter((r) => r.teams.includes(t)).reduce((a, r) => a + r.headcount / r.teams.length, 0)))
  const truth: RequestTruth = { months: months.map((m) => m.key), requests: new Array<number>(M).fill(0), mentions: {} }
  for (const s of skills) if (s.kind !== 'background') truth.mentions[s.id] = new Array<number>(M).fill(0)
  const rows: { ms: number; row: RequestRow }[] = []
  for (const month of months) {
    const t = month.index
    const q = skills.map((s) => Math.min(0.5, INTERNAL_SCALE * s.internal * shareAt(s.shape, s.baseShare, t - REQUEST_LAG_MONTHS, M)))
    const count = Math.max(1, Math.round(perMonth * LEARNING_SEASON[month.month - 1]! * (1 + rng.normal(0, 0.05))))
    for (let i = 0; i < count; i++) {
      const about = skills.filter((_s, k) => rng.next() < q[k]!)
      const team = teamPicker.pick(rng)
      const roll = rng.next()
      const channel: RequestRow['channel'] = roll < 0.5 ? 'portal-search' : roll < 0.82 ? 'training-request' : 'help-desk'
      let text: string
      if (about.length === 0) {
        text = rng.pick(channel === 'portal-search' ? SEARCH_GENERIC : channel === 'training-request' ? REQUEST_GENERIC : TICKET_GENERIC)
      } else if (channel === 'portal-search') {
        text = fill(rng.pick(SEARCH_FORMS), { X: about.map((s) => searchPhrase(rng, s)).join(' ') })
      } else {
        const list = joinList(rng, about.map((s) => (about.length > 1 ? s.phrases[0]! : s.solo)))
        text = fill(rng.pick(channel === 'training-request' ? REQUEST_FORMS : TICKET_FORMS), { L: list, T: team })
      }
      truth.requests[t]!++
      for (const s of about) if (truth.mentions[s.id]) truth.mentions[s.id]![t]!++
      const ms = randomMoment(rng, month)
      rows.push({ ms, row: { timestamp: isoSeconds(ms), text, channel, team } })
    }
  }
  rows.sort((a, b) => a.ms - b.ms)
  return { rows: rows.map((r) => r.row), truth }
}
