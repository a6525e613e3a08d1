/**
 * @module demo/postings
 * Generates the demo's external job postings month by month: hiring volume with seasonality, a role
 * per posting, the skills it mentions drawn with the planted shares, varied text, and reposts (exact
 * reposts on the same board, exact copies on another board, and copies with a small edit). Postings go
 * to a sink as they are made (the writers stream them to files); the return value is the ground truth
 * the tests and end-to-end checks compare the pipeline with.
 *
 * The last month ends at the as-of date but carries a whole month's volume, dated within its open days,
 * so that the newest month of the live-looking dashboard is as informative as the others.
 */
import type { DemoMonth } from './calendar.ts'
import { HIRING_SEASON, randomMoment } from './calendar.ts'
import { ORGANISATION, PLACES, ROLES, employerNames, type DemoRole } from './org.ts'
import { Rng, WeightedPicker } from './prng.ts'
import { demoSkills, shareAt, type DemoSkill } from './skills.ts'
import { CLOSINGS, INTROS, MUST, NICE, SENIORITY, SOFT, article, fill, joinList, renderPlain, salaryText, type BodyParts, type WorkMode } from './text.ts'

export type ChannelFormat = 'rss' | 'atom' | 'rss-jsonld' | 'jsonl'

/** Where a posting is published: three fictional job boards with feeds, two aggregators with JSON Lines exports. */
export interface Channel {
  id: string
  name: string
  format: ChannelFormat
  /** share of original postings */
  weight: number
  /** identifier prefix */
  prefix: string
  /** the board's (fictional, reserved .example) web address */
  site: string
}

export const CHANNELS: readonly Channel[] = [
  { id: 'thistledown', name: 'Thistledown Jobs', format: 'rss', weight: 0.1, prefix: 'td', site: 'https://thistledown-jobs.example' },
  { id: 'gannet-row', name: 'Gannet Row Careers', format: 'atom', weight: 0.085, prefix: 'gr', site: 'https://careers.gannet-row.example' },
  { id: 'wrenfield', name: 'Wrenfield Work Board', format: 'rss-jsonld', weight: 0.065, prefix: 'wf', site: 'https://wrenfield-work.example' },
  { id: 'openroles', name: 'Open Roles Exchange', format: 'jsonl', weight: 0.45, prefix: 'ore', site: 'https://openroles-exchange.example' },
  { id: 'commons', name: 'Commons Job Index', format: 'jsonl', weight: 0.3, prefix: 'cji', site: 'https://commons-jobs.example' },
]

export interface Posting {
  identifier: string
  channel: Channel
  /** epoch milliseconds of datePosted */
  ms: number
  month: number
  role: DemoRole
  title: string
  employer: string
  place: string
  mode: WorkMode
  employment: 'FULL_TIME' | 'PART_TIME' | 'CONTRACTOR'
  parts: BodyParts
  /** schema.org `skills` when the publisher fills it: a list, or one comma-separated text */
  skillsField: string[] | string | null
  /** concept ids the text mentions (planted, background and invented) */
  skillIds: string[]
  /** identifier of the original when this is a repost */
  repostOf: string | null
  /** a repost with a small edit */
  edited: boolean
}

/** What the demo planted, counted on the original postings (reposts excluded). */
export interface PostingTruth {
  months: string[]
  /** original postings per month */
  postings: number[]
  /** reposts per month (exact and edited) */
  reposts: number[]
  /** per planted or invented skill: originals that mention it, per month */
  mentions: Record<string, number[]>
  /** per planted skill: originals that mention it or a demo skill below it in the taxonomy */
  rolledUp: Record<string, number[]>
}

export interface PostingOptions {
  seed: number
  months: readonly DemoMonth[]
  perMonth: number
  /**
   * draw roles and skills and count them, but write no text and no reposts (the sink is not called):
   * the same skill draws at a fraction of the cost, for statistical tests that need large samples
   */
  countsOnly?: boolean
}

const OFF_ROLE = 0.06
const MAX_P = 0.9
const REPOST_RATE = 0.05
const DAY = 86_400_000

const SALARY_BASE: Record<string, number> = {
  swe: 55, da: 42, ds: 60, cloud: 58, sec: 52, sre: 62, qa: 40, pm: 60, projm: 52, ba: 45, sales: 35, cs: 36, hr: 44, fin: 43, lead: 68,
}
const SENIORITY_PAY: Record<string, number> = { '': 1, 'Senior ': 1.3, 'Junior ': 0.75, 'Lead ': 1.4, 'Principal ': 1.6, 'Graduate ': 0.65 }

/** Title words for language skills (used in "<Language> Developer" titles). */
const LANGUAGE_TITLES: Record<string, string> = {
  python: 'Python', java: 'Java', php: 'PHP', typescript: 'TypeScript', go: 'Golang', rust: 'Rust', javascript: 'JavaScript',
  'c-sharp': 'C#', 'dot-net': '.NET', react: 'React',
}

/** Probability table: for month t, p[r * K + k] is the chance that a posting of role r mentions skill k. */
export function probabilityTable(skills: readonly DemoSkill[], t: number, months: number): Float64Array {
  const R = ROLES.length
  const K = skills.length
  const total = ROLES.reduce((a, r) => a + r.marketShare, 0)
  const mix = ROLES.map((r) => r.marketShare / total)
  const p = new Float64Array(R * K)
  skills.forEach((s, k) => {
    const share = shareAt(s.shape, s.baseShare, t, months)
    const implied = ROLES.map((r) => r.implied.includes(s.id))
    const impliedMix = mix.reduce((a, m, r) => a + (implied[r] ? m : 0), 0)
    const rest = Math.max(0, share - impliedMix)
    const w = ROLES.map((r) => (s.roles === 'all' || s.roles.includes(r.key) ? 1 : OFF_ROLE))
    const norm = mix.reduce((a, m, r) => a + (implied[r] ? 0 : m * w[r]!), 0)
    for (let r = 0; r < R; r++) p[r * K + k] = implied[r] ? 1 : Math.min(MAX_P, (rest * w[r]!) / norm)
  })
  return p
}

function zeros(n: number): number[] {
  return new Array<number>(n).fill(0)
}

/**
 * Generates every posting of the demo period and passes each to `sink` (originals in date order
 * within a month, each month's reposts after its originals).
 * @returns the ground truth of what was planted
 */
export function generatePostings(opts: PostingOptions, sink: (p: Posting) => void): PostingTruth {
  const rng = Rng.stream(opts.seed, 'postings')
  const skills = demoSkills()
  const K = skills.length
  const M = opts.months.length
  const rolePicker = new WeightedPicker(ROLES, ROLES.map((r) => r.marketShare))
  const channelPicker = new WeightedPicker(CHANNELS, CHANNELS.map((c) => c.weight))
  const employers = rng.sample(employerNames(), 320)
  const employerPicker = new WeightedPicker(employers, employers.map((_e, i) => 1 / (i + 8)))
  const seniorityPicker = new WeightedPicker(SENIORITY.map((s) => s[0]), SENIORITY.map((s) => s[1]))
  const counters = new Map<string, number>()
  const nextId = (c: Channel) => {
    const n = (counters.get(c.id) ?? 0) + 1
    counters.set(c.id, n)
    return `${c.prefix}-${String(n).padStart(6, '0')}`
  }
  const truth: PostingTruth = { months: opts.months.map((m) => m.key), postings: zeros(M), reposts: zeros(M), mentions: {}, rolledUp: {} }
  const tracked = skills.map((s) => s.kind !== 'background')
  for (const s of skills) {
    if (s.kind !== 'background') truth.mentions[s.id] = zeros(M)
    if (s.kind === 'planted') truth.rolledUp[s.id] = zeros(M)
  }
  // roll-up targets by skill index (a planted skill rolls up into itself); per-index count arrays
  const indexOf = new Map(skills.map((s, k) => [s.id, k]))
  const rollTargets = skills.map((s, k) => [...(s.kind === 'planted' ? [k] : []), ...s.rollsUpTo.map((id) => indexOf.get(id)!)])
  const mentionCounts = skills.map((s) => truth.mentions[s.id] ?? null)
  const rolledCounts = skills.map((s) => truth.rolledUp[s.id] ?? null)
  const rollStamp = new Int32Array(K)
  let stamp = 0
  const first = opts.months[0]!
  const end = opts.months[M - 1]!
  const endMs = Date.UTC(end.year, end.month - 1, end.openDays, 23, 59, 59)
  const monthOf = (ms: number) => {
    const d = new Date(ms)
    return d.getUTCFullYear() * 12 + d.getUTCMonth() - (first.year * 12 + first.month - 1)
  }
  const pending: Posting[][] = opts.months.map(() => [])
  const chosen = new Int32Array(K)

  for (const month of opts.months) {
    const t = month.index
    const p = probabilityTable(skills, t, M)
    // volume: seasonality, a gentle upward trend, a little month-to-month noise; the open share of the last month
    const trend = 1 + (0.04 * (t - (M - 1) / 2)) / 12
    const count = Math.max(1, Math.round(opts.perMonth * HIRING_SEASON[month.month - 1]! * trend * (1 + rng.normal(0, 0.03))))
    const originals: Posting[] = []
    for (let i = 0; i < count; i++) {
      const roleIndex = rolePicker.index(rng)
      const role = ROLES[roleIndex]!
      let n = 0
      const base = roleIndex * K
      for (let k = 0; k < K; k++) {
        const pk = p[base + k]!
        if (pk > 0 && rng.next() < pk) chosen[n++] = k
      }
      truth.postings[t]!++
      // count each planted skill once per posting, whether mentioned itself or through a narrower skill
      stamp++
      for (let j = 0; j < n; j++) {
        const k = chosen[j]!
        if (tracked[k]) mentionCounts[k]![t]!++
        for (const target of rollTargets[k]!) {
          if (rollStamp[target] === stamp) continue
          rollStamp[target] = stamp
          rolledCounts[target]![t]!++
        }
      }
      if (opts.countsOnly) continue
      const picked = Array.from(chosen.subarray(0, n), (k) => skills[k]!)
      const posting = buildPosting(rng, role, picked, month, employerPicker, seniorityPicker)
      posting.channel = channelPicker.pick(rng)
      posting.identifier = nextId(posting.channel)
      originals.push(posting)
      if (rng.chance(REPOST_RATE)) {
        const repost = makeRepost(rng, posting, nextId)
        if (repost.ms <= endMs) pending[monthOf(repost.ms)]!.push(repost)
      }
    }
    originals.sort((a, b) => a.ms - b.ms)
    for (const o of originals) sink(o)
    for (const r of pending[t]!) {
      truth.reposts[t]!++
      sink(r)
    }
  }
  return truth
}

/** The phrase for a skill: the main label most often, another label sometimes; labels that are also common words only in lists. */
function phraseOf(rng: Rng, s: DemoSkill, inList: boolean): string {
  if (!inList) return s.solo
  return s.phrases.length === 1 || rng.chance(0.6) ? s.phrases[0]! : rng.pick(s.phrases)
}

function buildPosting(
  rng: Rng,
  role: DemoRole,
  picked: DemoSkill[],
  month: DemoMonth,
  employerPicker: WeightedPicker<string>,
  seniorityPicker: WeightedPicker<string>,
): Posting {
  const employer = rng.chance(0.01) ? ORGANISATION : employerPicker.pick(rng)
  const place = rng.pick(PLACES)
  const modeRoll = rng.next()
  const mode: WorkMode = modeRoll < 0.5 ? 'hybrid' : modeRoll < 0.8 ? 'onsite' : 'remote'
  const seniority = role.key === 'lead' ? '' : seniorityPicker.pick(rng)
  const hard = rng.shuffle(picked.filter((s) => s.group === 'hard'))
  const soft = rng.shuffle(picked.filter((s) => s.group === 'soft'))
  let titleBase = rng.pick(role.titles)
  const languages = hard.filter((s) => LANGUAGE_TITLES[s.id])
  if (role.key === 'swe' && languages.length > 0 && rng.chance(0.2)) titleBase = `${LANGUAGE_TITLES[languages[0]!.id]} Developer`
  const title = `${seniority}${titleBase}`

  const mustCount = hard.length <= 1 ? hard.length : Math.max(1, Math.ceil(hard.length * 0.65))
  const mustSkills = hard.slice(0, mustCount)
  const niceSkills = hard.slice(mustCount)
  const must: string[] = []
  const groups = mustSkills.length > 4 ? [mustSkills.slice(0, Math.ceil(mustSkills.length / 2)), mustSkills.slice(Math.ceil(mustSkills.length / 2))] : [mustSkills]
  const hardPhrases: string[] = []
  for (const g of groups) {
    if (g.length === 0) continue
    const phrases = g.map((s) => phraseOf(rng, s, g.length > 1))
    hardPhrases.push(...phrases)
    must.push(fill(rng.pick(MUST), { L: joinList(rng, phrases) }))
  }
  let nice: string | null = null
  if (niceSkills.length) {
    const phrases = niceSkills.map((s) => phraseOf(rng, s, niceSkills.length > 1))
    hardPhrases.push(...phrases)
    nice = fill(rng.pick(NICE), { L: joinList(rng, phrases) })
  }
  const softText = soft.length ? fill(rng.pick(SOFT), { S: joinList(rng, soft.map((s) => phraseOf(rng, s, true))) }) : null

  const pay = SALARY_BASE[role.key]! * SENIORITY_PAY[seniority]! * (0.9 + 0.15 * rng.next())
  const low = Math.round(pay) * 1000
  const high = low + 1000 * rng.between(4, 12)
  const layoutRoll = rng.next()
  const parts: BodyParts = {
    layout: layoutRoll < 0.5 ? 0 : layoutRoll < 0.8 ? 1 : 2,
    intro: fill(rng.pick(INTROS), { E: employer, A: article(title), T: title, P: place }),
    duties: rng.sample(role.duties, rng.between(2, Math.min(4, role.duties.length))),
    must,
    nice,
    soft: softText,
    salary: salaryText(low, high),
    closing: rng.pick(CLOSINGS),
  }
  let skillsField: string[] | string | null = null
  if (hardPhrases.length && rng.chance(0.35)) skillsField = rng.chance(0.8) ? hardPhrases.slice() : hardPhrases.join(', ')
  const employmentRoll = rng.next()
  return {
    identifier: '',
    channel: CHANNELS[0]!,
    ms: randomMoment(rng, month),
    month: month.index,
    role,
    title,
    employer,
    place,
    mode,
    employment: employmentRoll < 0.86 ? 'FULL_TIME' : employmentRoll < 0.94 ? 'CONTRACTOR' : 'PART_TIME',
    parts,
    skillsField,
    skillIds: [...new Set([...picked.map((s) => s.id), ...role.implied])],
    repostOf: null,
    edited: false,
  }
}

/** A repost of `original`: the same text on the same board later, the same text on another board, or a small edit. */
function makeRepost(rng: Rng, original: Posting, nextId: (c: Channel) => string): Posting {
  const roll = rng.next()
  const otherBoard = () => {
    let c = original.channel
    while (c.id === original.channel.id) c = rng.pick(CHANNELS)
    return c
  }
  if (roll < 0.4) {
    const channel = original.channel
    return { ...original, channel, identifier: nextId(channel), ms: original.ms + rng.between(7, 28) * DAY, repostOf: original.identifier }
  }
  if (roll < 0.7) {
    const channel = otherBoard()
    return { ...original, channel, identifier: nextId(channel), ms: original.ms + rng.between(0, 5) * DAY + rng.int(DAY), repostOf: original.identifier }
  }
  // a small edit that keeps the word 4-shingle Jaccard similarity above 0.9: one number of the salary
  // line changed in longer postings (about (n - 4) / (n + 4) for n words), else a word put before the
  // title or a short sentence after the text, which add one or three shingles and remove none
  const channel = otherBoard()
  const words = renderPlain(original.parts).split(/\s+/).length
  let { title, parts } = original
  const kind = rng.next()
  if (words >= 90 && kind < 0.5) parts = { ...parts, salary: parts.salary.replace(/to (\d+),000/, (_m, b: string) => `to ${Number(b) + 2},000`) }
  else if (kind < 0.75) title = `Urgent: ${title}`
  else parts = { ...parts, closing: `${parts.closing} Closing date extended.` }
  return { ...original, channel, identifier: nextId(channel), ms: original.ms + rng.between(1, 10) * DAY + rng.int(DAY), title, parts, repostOf: original.identifier, edited: true }
}
