/**
 * @module demo/generate
 * Writes every file of the demo scenario for one set of parameters: postings (JSON Lines under
 * <dataDir>/demo, RSS/Atom under <dataDir>/feeds), internal requests, people, roles, item banks,
 * responses, imported abilities, courses, the ground truth and a manifest. The same parameters always
 * give byte-identical files.
 */
import fs from 'node:fs'
import path from 'node:path'
import { toCsv } from '../util/csv.ts'
import { demoMonths, parseAsOf } from './calendar.ts'
import { generateCourses } from './courses.ts'
import { ORGANISATION, ROLES } from './org.ts'
import { PLANTED_SKILLS } from './planted.ts'
import { CHANNELS, generatePostings, type Channel } from './postings.ts'
import { REQUEST_LAG_MONTHS, generateRequests } from './requests.ts'
import { INVENTED_TERMS } from './skills.ts'
import { generateAssessments, generatePeople } from './workforce.ts'
import { FeedWriter, JsonlWriter, jobPostingJson, type FeedFile } from './writers.ts'

/** Demo parameters that cannot be used, or demo files that did not import; the message says which. */
export class DemoError extends Error {
  override name = 'DemoError'
}

/** Bumped whenever the generator's output for the same parameters changes. */
export const DEMO_VERSION = 1

export interface DemoParams {
  seed: number
  /** number of months of postings and requests */
  months: number
  /** original postings in an average month (reposts come on top, about 5%) */
  perMonth: number
  /** last day of the period, YYYY-MM-DD (the period ends in this month) */
  asOf: string
  /** people at Fernhollow */
  people: number
  /** items per feed page (older items go to archive pages) */
  feedPageSize: number
}

export const DEFAULT_PARAMS: Omit<DemoParams, 'asOf'> = { seed: 7, months: 36, perMonth: 2000, people: 3000, feedPageSize: 4000 }

/** The CSV import kinds the demo writes, in the order they must be imported (items before responses). */
export const DEMO_TABLES = ['people', 'roles', 'items', 'responses', 'abilities', 'courses'] as const
export type DemoTable = (typeof DEMO_TABLES)[number]

export interface DemoManifest {
  version: number
  organisation: string
  params: DemoParams
  /** paths relative to the data folder */
  tables: Record<DemoTable, string>
  requests: string
  jsonl: { channel: string; name: string; file: string; postings: number }[]
  feeds: { channel: string; name: string; format: Channel['format']; file: string; items: number; current: boolean }[]
  truth: string
  counts: { postings: number; reposts: number; requests: number; people: number; items: number; responses: number; abilities: number; courses: number }
}

export const MANIFEST_FILE = 'demo/manifest.json'

/** Names of the feed files this generator writes, so stale pages from earlier runs can be removed. */
const FEED_FILE = new RegExp(`^(${CHANNELS.map((c) => c.id).join('|')})(-archive-\\d+)?\\.(rss|atom)$`)

/**
 * Generates all demo files under `dataDir`.
 * @throws DemoError for impossible parameters (non-positive counts, a bad as-of date)
 */
export function generateDemo(dataDir: string, params: DemoParams, log: (m: string) => void = () => {}): DemoManifest {
  checkParams(params)
  const started = performance.now()
  const demoDir = path.join(dataDir, 'demo')
  const feedDir = path.join(dataDir, 'feeds')
  fs.mkdirSync(demoDir, { recursive: true })
  fs.mkdirSync(feedDir, { recursive: true })
  for (const name of fs.readdirSync(feedDir)) if (FEED_FILE.test(name)) fs.rmSync(path.join(feedDir, name))
  const months = demoMonths(params.asOf, params.months)

  // postings: JSON Lines streamed per aggregator, feed items collected per board
  const jsonl = new Map<string, JsonlWriter>()
  const feeds = new Map<string, FeedWriter>()
  for (const c of CHANNELS) {
    if (c.format === 'jsonl') jsonl.set(c.id, new JsonlWriter(path.join(demoDir, `postings-${c.id}.jsonl`)))
    else feeds.set(c.id, new FeedWriter(c, feedDir, params.feedPageSize))
  }
  let postings
  try {
    postings = generatePostings({ seed: params.seed, months, perMonth: params.perMonth }, (p) => {
      const feed = feeds.get(p.channel.id)
      if (feed) feed.add(p)
      // one aggregator exports plain-text descriptions with date-times, the other HTML with dates only
      else jsonl.get(p.channel.id)!.writeLine(jobPostingJson(p, { html: p.channel.id === 'commons', dateOnly: p.channel.id === 'commons' }))
    })
  } finally {
    for (const w of jsonl.values()) w.close()
  }
  const feedFiles: FeedFile[] = [...feeds.values()].flatMap((f) => f.finish())
  const totalPostings = postings.postings.reduce((a, b) => a + b, 0)
  const totalReposts = postings.reposts.reduce((a, b) => a + b, 0)
  log(`demo: ${totalPostings} postings and ${totalReposts} reposts over ${params.months} months to ${months[months.length - 1]!.key} (${((performance.now() - started) / 1000).toFixed(1)} s)`)

  const requests = generateRequests(params.seed, months, Math.max(1, Math.round(params.perMonth / 5)))
  fs.writeFileSync(path.join(demoDir, 'requests.csv'), toCsv(requests.rows as unknown as Record<string, unknown>[], ['timestamp', 'text', 'channel', 'team']))

  const people = generatePeople(params.seed, params.people)
  const work = generateAssessments(params.seed, people, params.asOf)
  const courses = generateCourses(params.seed, params.months, params.asOf)
  const write = (name: string, rows: readonly Record<string, unknown>[], columns: string[]) => fs.writeFileSync(path.join(demoDir, name), toCsv(rows, columns))
  write('people.csv', people.map((p) => ({ person_id: p.id, role: p.role.name, team: p.team })), ['person_id', 'role', 'team'])
  write('roles.csv', ROLES.flatMap((r) => r.requires.map(([skill, theta]) => ({ role: r.name, skill_id: skill, required_theta: theta }))), ['role', 'skill_id', 'required_theta'])
  write('items.csv', work.items, ['item_id', 'skill_id', 'a', 'b', 'c'])
  write('responses.csv', work.responses, ['person_id', 'item_id', 'response', 'taken_at'])
  write('abilities.csv', work.abilities, ['person_id', 'skill_id', 'theta', 'se', 'assessed_at'])
  write('courses.csv', courses as unknown as Record<string, unknown>[], ['course_id', 'title', 'skills', 'last_reviewed', 'enrollments_12m', 'owner', 'enrollments_prev_12m'])
  write('truth-abilities.csv', work.trueAbilities, ['person_id', 'skill_id', 'theta'])

  const truth = {
    organisation: ORGANISATION,
    note: 'Ground truth of the fictional demo scenario: what was planted, counted on the original postings (reposts excluded).',
    params,
    requestLagMonths: REQUEST_LAG_MONTHS,
    planted: PLANTED_SKILLS,
    invented: INVENTED_TERMS.map((t) => ({ id: t.id, phrase: t.phrases[0], baseShare: t.baseShare, shape: t.shape })),
    postings,
    requests: requests.truth,
  }
  fs.writeFileSync(path.join(demoDir, 'truth.json'), JSON.stringify(truth, null, 1) + '\n')

  const manifest: DemoManifest = {
    version: DEMO_VERSION,
    organisation: ORGANISATION,
    params,
    tables: Object.fromEntries(DEMO_TABLES.map((t) => [t, `demo/${t}.csv`])) as Record<DemoTable, string>,
    requests: 'demo/requests.csv',
    jsonl: [...jsonl.entries()].map(([id, w]) => ({ channel: id, name: CHANNELS.find((c) => c.id === id)!.name, file: `demo/postings-${id}.jsonl`, postings: w.count })),
    feeds: feedFiles.map((f) => ({ channel: f.channel.id, name: f.channel.name, format: f.channel.format, file: `feeds/${f.name}`, items: f.items, current: f.current })),
    truth: 'demo/truth.json',
    counts: {
      postings: totalPostings,
      reposts: totalReposts,
      requests: requests.rows.length,
      people: people.length,
      items: work.items.length,
      responses: work.responses.length,
      abilities: work.abilities.length,
      courses: courses.length,
    },
  }
  fs.writeFileSync(path.join(dataDir, MANIFEST_FILE), JSON.stringify(manifest, null, 2) + '\n')
  log(
    `demo: wrote ${feedFiles.length} feed files, ${manifest.jsonl.length} JSON Lines files, ${requests.rows.length} requests, ${people.length} people, ` +
      `${work.items.length} items, ${work.responses.length} responses, ${work.abilities.length} imported abilities, ${courses.length} courses ` +
      `(${((performance.now() - started) / 1000).toFixed(1)} s)`,
  )
  return manifest
}

/**
 * Checks demo parameters.
 * @throws DemoError naming the first bad one
 */
export function checkParams(params: DemoParams): void {
  if (!Number.isSafeInteger(params.seed) || params.seed < 0) throw new DemoError(`demo seed must be a whole number >= 0, got ${params.seed}`)
  for (const key of ['months', 'perMonth', 'people', 'feedPageSize'] as const) {
    if (!Number.isInteger(params[key]) || params[key] < 1) throw new DemoError(`demo ${key} must be a positive whole number, got ${params[key]}`)
  }
  if (params.months < 12) throw new DemoError(`demo months must be at least 12 (fewer cannot show a trend), got ${params.months}`)
  if (params.months > 240) throw new DemoError(`demo months must be at most 240, got ${params.months}`)
  if (params.perMonth > 100_000) throw new DemoError(`demo perMonth must be at most 100000, got ${params.perMonth}`)
  if (params.people > 1_000_000) throw new DemoError(`demo people must be at most 1000000, got ${params.people}`)
  try {
    parseAsOf(params.asOf)
  } catch (err) {
    throw new DemoError((err as Error).message)
  }
}

/** Reads the manifest of the demo files in `dataDir`, or null when there is none (or it is unreadable). */
export function readManifest(dataDir: string): DemoManifest | null {
  try {
    const m = JSON.parse(fs.readFileSync(path.join(dataDir, MANIFEST_FILE), 'utf8')) as DemoManifest
    return m.version === DEMO_VERSION ? m : null
  } catch {
    return null
  }
}

/** True when every file the manifest lists exists. */
export function manifestFilesExist(dataDir: string, m: DemoManifest): boolean {
  const files = [...Object.values(m.tables), m.requests, m.truth, ...m.jsonl.map((j) => j.file), ...m.feeds.map((f) => f.file)]
  return files.every((f) => fs.existsSync(path.join(dataDir, f)))
}
