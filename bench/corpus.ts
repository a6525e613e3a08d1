/**
 * @module bench/corpus
 * Synthetic large inputs for the benchmarks and the soak tests: a skills taxonomy of K concepts (the
 * shipped taxonomy plus generated concepts, 20,000 concepts / 80,000 labels by default) and N schema.org
 * `JobPosting` JSON Lines over M months, about 2 KB of text each, with planted skill trends whose true
 * monthly shares are known. Seeded (one seed gives byte-identical files) and streaming (postings are
 * written in chunks; nothing large is held in memory and nothing large is committed: files go to
 * bench/.work/, which git ignores).
 *
 * All organisations, places and tool names are invented for the fictional Fernhollow Cooperative
 * scenario; concept names in generated rows are made-up tool names and plain-English practice phrases.
 *
 * Standalone: `npx tsx bench/corpus.ts [--n 100000] [--months 60] [--seed 7] [--out bench/.work]`.
 */
import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { parseArgs } from 'node:util'
import { parse } from 'csv-parse/sync'

const here = path.dirname(fileURLToPath(import.meta.url))
export const WORK_DIR = path.join(here, '.work')
export const SHIPPED_TAXONOMY = path.join(here, '..', 'taxonomy', 'skills.csv')
/** part of every generated file name: bump it whenever the generator's output changes */
export const CORPUS_VERSION = 3

// ---------------------------------------------------------------------------------------------------
// seeded random numbers

/**
 * mulberry32 (Tommy Ettinger, public domain): 32-bit state, period 2^32, fast and good enough for
 * synthetic data. https://gist.github.com/tommyettinger/46a874533244883189143505d203312c
 */
export class Random {
  private state: number
  constructor(seed: number) {
    this.state = (seed ^ 0x9e3779b9) >>> 0
  }
  /** uniform in [0, 1) */
  next(): number {
    let t = (this.state = (this.state + 0x6d2b79f5) >>> 0)
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
  /** uniform integer in [0, n) */
  int(n: number): number {
    return Math.floor(this.next() * n)
  }
  pick<T>(items: readonly T[]): T {
    return items[this.int(items.length)]!
  }
}

// ---------------------------------------------------------------------------------------------------
// taxonomy

export interface TaxonomyConcept {
  id: string
  prefLabel: string
  altLabels: string[]
  hiddenLabels: string[]
  broader: string[]
  type: 'hard' | 'soft'
  /** true for rows copied from taxonomy/skills.csv */
  shipped: boolean
}

export interface GeneratedTaxonomy {
  concepts: TaxonomyConcept[]
  labelCount: number
}

const ONSETS = ['b', 'br', 'c', 'cr', 'd', 'dr', 'f', 'fl', 'g', 'gl', 'h', 'k', 'kl', 'l', 'm', 'n', 'p', 'pr', 'qu', 'r', 's', 'st', 't', 'tr', 'v', 'vr', 'z', 'th', 'sk', 'sp']
const VOWELS = ['a', 'e', 'i', 'o', 'u', 'ai', 'ea', 'io', 'ou', 'y', 'ae', 'ei']
const CODAS = ['', 'n', 'r', 'l', 'x', 'm', 's', 'th', 'nd', 'rk', 'lt', 'v', 'q', 'sh', 'rn', 'st']
const TOOL_SUFFIXES = ['', '', '', 'DB', 'OS', 'ML', 'IQ', 'Flow', 'Stack', 'Mesh', 'Grid', 'Forge', 'Lens', 'Hub', 'Base']
const TOOL_NOUNS = ['platform', 'framework', 'toolkit', 'engine', 'suite', 'library', 'runtime', 'studio']

const DOMAINS = [
  'data', 'cloud', 'network', 'security', 'supply chain', 'payroll', 'warehouse', 'fleet', 'energy', 'grid', 'clinical',
  'laboratory', 'retail', 'logistics', 'procurement', 'customer', 'marketing', 'content', 'mobile', 'embedded', 'firmware',
  'identity', 'access', 'storage', 'backup', 'observability', 'incident', 'release', 'test', 'quality', 'risk', 'compliance',
  'audit', 'tax', 'treasury', 'pricing', 'forecast', 'inventory', 'maintenance', 'safety', 'field service', 'crop', 'soil',
  'water', 'waste', 'building', 'facilities', 'event', 'media', 'translation', 'accessibility', 'privacy', 'geospatial',
  'sensor', 'robotics', 'vision', 'speech', 'search', 'recommendation', 'graph', 'stream', 'batch', 'ledger', 'contract',
]
const ACTIVITIES: readonly (readonly [string, string, string])[] = [
  // [noun phrase, alternative noun, "of" form head]
  ['engineering', 'development', 'engineering'],
  ['analysis', 'analytics', 'analysis'],
  ['administration', 'operations', 'administration'],
  ['architecture', 'design', 'architecture'],
  ['testing', 'validation', 'testing'],
  ['modelling', 'modeling', 'modelling'],
  ['management', 'governance', 'management'],
  ['automation', 'scripting', 'automation'],
  ['monitoring', 'alerting', 'monitoring'],
  ['optimisation', 'optimization', 'optimisation'],
  ['migration', 'modernisation', 'migration'],
  ['integration', 'interfacing', 'integration'],
  ['reporting', 'dashboards', 'reporting'],
  ['auditing', 'assurance', 'auditing'],
  ['planning', 'scheduling', 'planning'],
  ['forecasting', 'prediction', 'forecasting'],
  ['troubleshooting', 'diagnostics', 'troubleshooting'],
  ['configuration', 'setup', 'configuration'],
  ['visualisation', 'visualization', 'visualisation'],
  ['coordination', 'liaison', 'coordination'],
]
const QUALIFIERS = ['applied', 'advanced', 'distributed', 'real-time', 'regulated', 'large-scale', 'secure', 'sustainable', 'automated', 'hybrid', 'remote', 'predictive', 'low-latency', 'open-source', 'multi-site', 'cross-border']
const SOFT_SKILLS = [
  'active listening', 'conflict resolution', 'facilitation', 'storytelling', 'coaching', 'delegation', 'time management',
  'written communication', 'public speaking', 'persuasion', 'resilience', 'curiosity', 'self-direction', 'cultural awareness',
  'decision making', 'prioritisation', 'feedback', 'mentoring', 'collaboration', 'adaptability', 'empathy', 'diplomacy',
]

function slug(text: string): string {
  return text
    .toLowerCase()
    .normalize('NFKD')
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '')
}

function capitalise(word: string): string {
  return word[0]!.toUpperCase() + word.slice(1)
}

/** An invented one- or two-syllable tool name, e.g. "Quorn", "Stealix". */
function toolName(rng: Random): string {
  const syllables = 1 + (rng.next() < 0.7 ? 1 : 0) + (rng.next() < 0.15 ? 1 : 0)
  let name = ''
  for (let i = 0; i < syllables; i++) name += rng.pick(ONSETS) + rng.pick(VOWELS) + (i === syllables - 1 || rng.next() < 0.3 ? rng.pick(CODAS) : '')
  return capitalise(name) + rng.pick(TOOL_SUFFIXES)
}

/** A plausible misspelling: one letter dropped or two neighbours swapped. */
function misspell(label: string, rng: Random): string {
  const letters = [...label]
  const positions = letters.map((c, i) => (/[a-z]/i.test(c) ? i : -1)).filter((i) => i > 0 && i < letters.length - 1)
  if (positions.length < 2) return label + label.slice(-1)
  const at = rng.pick(positions)
  if (rng.next() < 0.5) letters.splice(at, 1)
  else [letters[at], letters[at - 1]] = [letters[at - 1]!, letters[at]!]
  return letters.join('')
}

/** Reads taxonomy/skills.csv. */
export function readShippedTaxonomy(file = SHIPPED_TAXONOMY): TaxonomyConcept[] {
  const rows = parse(fs.readFileSync(file, 'utf8'), { columns: true, bom: true, skip_empty_lines: true }) as Record<string, string>[]
  const split = (v: string | undefined) => (v ? v.split('|').map((s) => s.trim()).filter(Boolean) : [])
  return rows.map((r) => ({
    id: r['id']!,
    prefLabel: r['prefLabel']!,
    altLabels: split(r['altLabel']),
    hiddenLabels: split(r['hiddenLabel']),
    broader: split(r['broader']),
    type: r['type'] === 'soft' ? 'soft' : 'hard',
    shipped: true,
  }))
}

function labelsOf(c: TaxonomyConcept): string[] {
  return [c.prefLabel, ...c.altLabels, ...c.hiddenLabels]
}

/**
 * The shipped taxonomy plus generated concepts up to `concepts` concepts and about `labels` labels.
 * Generated concepts are invented tools ("Quornflow", alt "Quornflow platform", hidden a misspelling),
 * practices ("real-time ledger auditing", alt "ledger assurance", "auditing of ledgers") and tool
 * practices ("Quornflow administration", broader the tool). Every label is unique (case-insensitive).
 */
export function generateTaxonomy(opts: { concepts?: number; labels?: number; seed?: number; shipped?: TaxonomyConcept[] } = {}): GeneratedTaxonomy {
  const target = opts.concepts ?? 20_000
  const targetLabels = opts.labels ?? 80_000
  const rng = new Random((opts.seed ?? 7) * 7919 + 1)
  const shipped = opts.shipped ?? readShippedTaxonomy()
  const concepts: TaxonomyConcept[] = [...shipped]
  const used = new Set<string>()
  const ids = new Set<string>()
  let labelCount = 0
  for (const c of shipped) {
    ids.add(c.id)
    for (const l of labelsOf(c)) used.add(l.toLowerCase())
    labelCount += labelsOf(c).length
  }
  const claim = (label: string): boolean => {
    const key = label.toLowerCase()
    if (used.has(key)) return false
    used.add(key)
    return true
  }
  const uniqueId = (base: string): string => {
    let id = slug(base) || 'concept'
    for (let k = 2; ids.has(id); k++) id = `${slug(base)}-${k}`
    ids.add(id)
    return id
  }
  const tools: TaxonomyConcept[] = []
  const domainRoots = new Map<string, string>()
  const add = (pref: string, alts: string[], hiddens: string[], broader: string[], type: 'hard' | 'soft'): TaxonomyConcept | null => {
    if (!claim(pref)) return null
    const c: TaxonomyConcept = { id: uniqueId(pref), prefLabel: pref, altLabels: alts.filter(claim), hiddenLabels: hiddens.filter(claim), broader, type, shipped: false }
    concepts.push(c)
    labelCount += labelsOf(c).length
    return c
  }
  // one root concept per domain, so the generated concepts hang in a hierarchy
  for (const d of DOMAINS) {
    const root = add(`${d} technology`, [`${d} systems`], [], [], 'hard')
    if (root) domainRoots.set(d, root.id)
  }
  for (const s of SOFT_SKILLS) add(`${s} at work`, [`${s} in teams`], [], [], 'soft')
  // how many labels each further concept should carry so the total lands near targetLabels
  const perConcept = () => {
    const remaining = target - concepts.length
    return remaining > 0 ? (targetLabels - labelCount) / remaining : 4
  }
  let guard = 0
  while (concepts.length < target && guard++ < target * 50) {
    const want = perConcept()
    const extraAlt = rng.next() < want - Math.floor(want) ? 1 : 0
    const nAlt = Math.max(0, Math.floor(want) - 2 + extraAlt)
    const roll = rng.next()
    if (roll < 0.4 || tools.length === 0) {
      const name = toolName(rng)
      const alts = [`${name} ${rng.pick(TOOL_NOUNS)}`, name.replace(/(DB|OS|ML|IQ|Flow|Stack|Mesh|Grid|Forge|Lens|Hub|Base)$/, ' $1'), `${name}.io`, `${name} ${rng.pick(TOOL_NOUNS)} skills`].slice(0, nAlt)
      const c = add(name, alts, [misspell(name, rng)], [domainRoots.get(rng.pick(DOMAINS)) ?? ''].filter(Boolean), 'hard')
      if (c) tools.push(c)
    } else if (roll < 0.75) {
      const domain = rng.pick(DOMAINS)
      const [act, alt, head] = rng.pick(ACTIVITIES)
      const qual = rng.next() < 0.6 ? rng.pick(QUALIFIERS) + ' ' : ''
      const pref = `${qual}${domain} ${act}`
      const alts = [`${qual}${domain} ${alt}`, `${head} of ${qual}${domain} systems`, `${qual}${domain}-${act}`, `${capitalise(qual || domain)} ${qual ? domain + ' ' : ''}${act} practice`].slice(0, nAlt)
      add(pref, alts, [misspell(pref, rng)], [domainRoots.get(domain) ?? ''].filter(Boolean), rng.next() < 0.05 ? 'soft' : 'hard')
    } else {
      const tool = rng.pick(tools)
      const [act, alt] = rng.pick(ACTIVITIES)
      const pref = `${tool.prefLabel} ${act}`
      const alts = [`${tool.prefLabel} ${alt}`, `${act} with ${tool.prefLabel}`, `${tool.prefLabel}-based ${act}`, `${tool.prefLabel} ${act} experience`].slice(0, nAlt)
      add(pref, alts, [misspell(pref, rng)], [tool.id], 'hard')
    }
  }
  return { concepts, labelCount }
}

function csvField(value: string): string {
  return /[",\r\n]/.test(value) ? `"${value.replace(/"/g, '""')}"` : value
}

/** Writes the taxonomy as CSV in the import format (`id,prefLabel,altLabel,hiddenLabel,broader,type`). */
export function writeTaxonomyCsv(file: string, taxonomy: GeneratedTaxonomy): void {
  fs.mkdirSync(path.dirname(file), { recursive: true })
  const lines = ['id,prefLabel,altLabel,hiddenLabel,broader,type']
  for (const c of taxonomy.concepts) {
    lines.push([c.id, c.prefLabel, c.altLabels.join('|'), c.hiddenLabels.join('|'), c.broader.join('|'), c.type].map(csvField).join(','))
  }
  fs.writeFileSync(file, lines.join('\n') + '\n')
}

// ---------------------------------------------------------------------------------------------------
// planted trends

export type TrendShape =
  | { kind: 'rising'; annualGrowth: number }
  | { kind: 'declining'; halfLifeYears: number }
  | { kind: 'emerging'; startFraction: number; annualGrowth: number }
  | { kind: 'steady' }
  | { kind: 'change'; breakFraction: number; halfLifeYears: number }

export interface PlantedTrend {
  /** concept id in the shipped taxonomy, or the index-th generated concept when `generated` is set */
  id: string
  /** the phrase written into posting text (a label of the concept) */
  phrase: string
  /** share of postings mentioning it in month 0 (for emerging: at the start month) */
  baseShare: number
  shape: TrendShape
}

/** Trends planted on shipped concepts with unambiguous labels (each id must exist in skills.csv). */
const SHIPPED_TRENDS: readonly Omit<PlantedTrend, 'phrase'>[] = [
  { id: 'kubernetes', baseShare: 0.05, shape: { kind: 'rising', annualGrowth: 0.3 } },
  { id: 'terraform', baseShare: 0.03, shape: { kind: 'rising', annualGrowth: 0.35 } },
  { id: 'typescript', baseShare: 0.06, shape: { kind: 'rising', annualGrowth: 0.2 } },
  { id: 'mlops', baseShare: 0.01, shape: { kind: 'rising', annualGrowth: 0.5 } },
  { id: 'prompt-engineering', baseShare: 0.01, shape: { kind: 'emerging', startFraction: 0.55, annualGrowth: 2.0 } },
  { id: 'vector-databases', baseShare: 0.008, shape: { kind: 'emerging', startFraction: 0.6, annualGrowth: 1.5 } },
  { id: 'python', baseShare: 0.18, shape: { kind: 'steady' } },
  { id: 'sql', baseShare: 0.2, shape: { kind: 'steady' } },
  { id: 'project-management', baseShare: 0.1, shape: { kind: 'steady' } },
  { id: 'hadoop', baseShare: 0.05, shape: { kind: 'declining', halfLifeYears: 2 } },
  { id: 'jquery', baseShare: 0.06, shape: { kind: 'declining', halfLifeYears: 3 } },
  { id: 'perl', baseShare: 0.03, shape: { kind: 'declining', halfLifeYears: 4 } },
  { id: 'angularjs', baseShare: 0.04, shape: { kind: 'declining', halfLifeYears: 2.5 } },
  { id: 'silverlight', baseShare: 0.008, shape: { kind: 'declining', halfLifeYears: 1.5 } },
  { id: 'jenkins', baseShare: 0.06, shape: { kind: 'change', breakFraction: 0.7, halfLifeYears: 1.5 } },
]

/** Share of postings mentioning a planted trend in month `m` of `months`. */
export function trendShare(t: PlantedTrend, m: number, months: number): number {
  const s = t.shape
  switch (s.kind) {
    case 'steady':
      return t.baseShare
    case 'rising':
      return Math.min(0.9, t.baseShare * Math.pow(1 + s.annualGrowth, m / 12))
    case 'declining':
      return t.baseShare * Math.pow(2, -m / (12 * s.halfLifeYears))
    case 'emerging': {
      const start = Math.round(s.startFraction * months)
      return m < start ? 0 : Math.min(0.9, t.baseShare * Math.pow(1 + s.annualGrowth, (m - start) / 12))
    }
    case 'change': {
      const brk = Math.round(s.breakFraction * months)
      return m < brk ? t.baseShare : t.baseShare * Math.pow(2, -(m - brk) / (12 * s.halfLifeYears))
    }
  }
}

/** The planted trends for a taxonomy: the shipped ones above plus 10 on generated concepts. */
export function plantedTrends(taxonomy: GeneratedTaxonomy, seed = 7): PlantedTrend[] {
  const byId = new Map(taxonomy.concepts.map((c) => [c.id, c]))
  const out: PlantedTrend[] = SHIPPED_TRENDS.map((t) => {
    const c = byId.get(t.id)
    if (!c) throw new Error(`planted trend ${t.id} is not in the taxonomy`)
    return { ...t, phrase: c.prefLabel }
  })
  const rng = new Random(seed * 31 + 5)
  const generated = taxonomy.concepts.filter((c) => !c.shipped && c.type === 'hard' && c.broader.length > 0)
  const shapes: TrendShape[] = [
    { kind: 'rising', annualGrowth: 0.4 },
    { kind: 'rising', annualGrowth: 0.25 },
    { kind: 'declining', halfLifeYears: 3 },
    { kind: 'declining', halfLifeYears: 5 },
    { kind: 'emerging', startFraction: 0.5, annualGrowth: 1.2 },
    { kind: 'steady' },
    { kind: 'steady' },
    { kind: 'change', breakFraction: 0.65, halfLifeYears: 2 },
    { kind: 'rising', annualGrowth: 0.6 },
    { kind: 'declining', halfLifeYears: 2 },
  ]
  const seen = new Set(out.map((t) => t.id))
  for (const shape of shapes) {
    let c = rng.pick(generated)
    while (seen.has(c.id)) c = rng.pick(generated)
    seen.add(c.id)
    out.push({ id: c.id, phrase: c.prefLabel, baseShare: 0.02 + rng.next() * 0.03, shape })
  }
  return out
}

// ---------------------------------------------------------------------------------------------------
// postings

const FIRST = ['Senior', 'Junior', 'Lead', 'Principal', 'Associate', 'Staff', '', '', '']
const ROLES = [
  'Software Engineer', 'Data Analyst', 'Platform Engineer', 'Site Reliability Engineer', 'Product Manager', 'QA Engineer',
  'Data Engineer', 'Security Analyst', 'Solutions Architect', 'Business Analyst', 'Support Engineer', 'Field Technician',
  'Operations Coordinator', 'Learning Designer', 'Network Engineer', 'Machine Learning Engineer', 'Logistics Planner',
]
const ORGS = [
  'Fernhollow Cooperative', 'Fernhollow Growers', 'Brackenmere Logistics', 'Tallowfield Energy', 'Quillbrook Health',
  'Marrowgate Café Foods', 'Otterby Freight', 'Wrenstone Insurance', 'Hazelcombe Water', 'Larkspur Civic Services',
]
const PLACES = ['Fernhollow', 'Brackenmere', 'Tallowfield', 'Quillbrook', 'Marrowgate', 'Otterby', 'Wrenstone', 'Hazelcombe', 'Larkspur Vale', 'Ashmoor']
const OCCUPATIONS = ['15-1252', '15-1244', '15-2051', '11-3021', '13-1111', '15-1212', '43-5011', '49-2022']

const S_OPEN = ['You will', 'Our team will ask you to', 'In this role you will', 'Day to day you will', 'We need someone to', 'You are expected to']
const S_VERB = ['own', 'improve', 'support', 'review', 'plan', 'document', 'shape', 'look after', 'measure', 'run', 'streamline', 'take part in']
const S_OBJECT = [
  'the quarterly roadmap', 'our weekly releases', 'the member services desk', 'the regional depots', 'supplier onboarding',
  'internal reporting', 'the on-call rota', 'customer interviews', 'budget reviews', 'the cooperative\'s shared services',
  'service level reports', 'seasonal hiring plans', 'the handover notes', 'training for new starters', 'the yearly audit',
]
const S_TAIL = [
  'with a small friendly team.', 'across three sites.', 'together with members and partners.', 'in a hybrid pattern.',
  'and report to the operations lead.', 'while keeping things simple.', 'using clear written updates.', 'with room to grow.',
  'and share what you learn.', 'in close touch with the board.', 'at a steady, sustainable pace.', '(no heroics required).',
]
const S_BENEFIT = [
  'We offer flexible hours, a pension and 28 days of leave.', 'Everyone gets a yearly learning budget and paid volunteering days.',
  'The cooperative is owned by its members; profits go back into the community.', 'Relocation help is available for the right person.',
  'We welcome applications from people of every background.', 'Part-time and job-share arrangements are possible.',
  'Our offices are step-free and close to public transport.', 'Salary is reviewed every spring in an open process.',
]
const SKILL_LEAD = ['Experience with', 'Solid knowledge of', 'Hands-on work with', 'Familiarity with', 'You bring', 'Bonus points for', 'Comfortable with', 'A track record in']
const SKILL_TAIL = ['is essential.', 'is a plus.', 'would help.', 'matters to us.', 'is expected from day one.', 'will be part of the job.']

export interface CorpusOptions {
  /** number of postings (including reposts) */
  n: number
  /** months covered, starting at `startMonth` */
  months: number
  seed?: number
  /** first month, 'YYYY-MM' (default 2020-01) */
  startMonth?: string
  /** approximate UTF-8 bytes of title + description (default 2000) */
  textBytes?: number
  /** fraction of postings that are exact reposts of a recent one under a new identifier (default 0.03) */
  repostRate?: number
  /** fraction of postings that are near-duplicate reposts (a closing line added) (default 0.02) */
  nearRepostRate?: number
  /** background skill mentions per posting (default 6) */
  mentionsPerPosting?: number
  /** index of the first posting (identifiers continue from here for incremental batches) */
  startIndex?: number
  /** put every posting in these month indexes instead of spreading them (incremental batches) */
  onlyMonths?: readonly number[]
  taxonomy: GeneratedTaxonomy
  trends?: PlantedTrend[]
}

export interface CorpusTruth {
  n: number
  bytes: number
  textBytes: number
  months: string[]
  /** postings per month, reposts excluded */
  originals: number[]
  reposts: number
  nearReposts: number
  /** per planted trend, original postings mentioning it per month */
  planted: { id: string; phrase: string; shape: TrendShape; counts: number[] }[]
}

function monthLabel(start: string, offset: number): string {
  const [y, m] = start.split('-').map(Number) as [number, number]
  const total = y * 12 + (m - 1) + offset
  return `${Math.floor(total / 12)}-${String((total % 12) + 1).padStart(2, '0')}`
}

/** A sampler of Zipf-distributed ranks (exponent s) over `n` items, by inverse CDF with binary search. */
function zipfSampler(n: number, s: number, rng: Random): () => number {
  const cdf = new Float64Array(n)
  let sum = 0
  for (let i = 0; i < n; i++) cdf[i] = sum += 1 / Math.pow(i + 1, s)
  return () => {
    const u = rng.next() * sum
    let lo = 0
    let hi = n - 1
    while (lo < hi) {
      const mid = (lo + hi) >>> 1
      if (cdf[mid]! < u) lo = mid + 1
      else hi = mid
    }
    return lo
  }
}

/**
 * Generates postings as JSON Lines, calling `write` with UTF-8 chunks of up to 8 MB (one reused buffer: copy it if you keep it past the call). Returns the truth:
 * postings per month and the planted trends' counts among original postings.
 */
export function generatePostings(opts: CorpusOptions, write: (chunk: Buffer) => void): CorpusTruth {
  const seed = opts.seed ?? 7
  const first = opts.startIndex ?? 0
  const rng = new Random(seed * 104729 + first)
  const months = opts.months
  const textBytes = opts.textBytes ?? 2000
  const repostRate = opts.repostRate ?? 0.03
  const nearRate = opts.nearRepostRate ?? 0.02
  const perPosting = opts.mentionsPerPosting ?? 6
  const start = opts.startMonth ?? '2020-01'
  const trends = opts.trends ?? plantedTrends(opts.taxonomy, seed)
  const trendIds = new Set(trends.map((t) => t.id))
  // a planted phrase as a whole word or phrase (so "sql" is found in "SQL skills" but not in "PostgreSQL")
  const trendPatterns = trends.map((t) => new RegExp(`(?<![\\p{L}\\p{N}])${t.phrase.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?![\\p{L}\\p{N}])`, 'iu'))
  const mentionsPlanted = (text: string) => trendPatterns.some((re) => re.test(text))
  // background concepts: everything not planted whose labels never contain a planted phrase, in a
  // seeded random popularity order; so the planted counts are the true counts of each phrase. The
  // order is the seed's alone, so that a continuation (startIndex > 0: the benchmark's increments)
  // asks for the same skills as the corpus it continues (the order is the first thing the stream of
  // a corpus from 0 draws, so the two agree, and a corpus from 0 is what it was)
  const order = first > 0 ? new Random(seed * 104729) : rng
  const background = opts.taxonomy.concepts.filter((c) => !trendIds.has(c.id) && !mentionsPlanted(c.prefLabel))
  for (let i = background.length - 1; i > 0; i--) {
    const j = order.int(i + 1)
    ;[background[i], background[j]] = [background[j]!, background[i]!]
  }
  // labels a posting writer would use: pref and alt labels mostly, a misspelt hidden label now and then
  const backgroundLabels = background.map((c) => ({
    labels: [c.prefLabel, c.prefLabel, ...c.altLabels.filter((l) => !mentionsPlanted(l))],
    hidden: c.hiddenLabels.filter((l) => !mentionsPlanted(l)),
  }))
  const zipf = zipfSampler(background.length, 1.0, rng)
  // a pool of filler sentences with no planted phrase in them
  const pool: string[] = []
  while (pool.length < 4096) {
    const s = `${rng.pick(S_OPEN)} ${rng.pick(S_VERB)} ${rng.pick(S_OBJECT)} ${rng.pick(S_TAIL)}`
    if (!mentionsPlanted(s)) pool.push(Buffer.from(s).toString()) // a flat string joins and serialises faster
  }
  const monthNames = Array.from({ length: months }, (_, m) => monthLabel(start, m))
  const truth: CorpusTruth = {
    n: opts.n,
    bytes: 0,
    textBytes: 0,
    months: monthNames,
    originals: new Array(months).fill(0),
    reposts: 0,
    nearReposts: 0,
    planted: trends.map((t) => ({ id: t.id, phrase: t.phrase, shape: t.shape, counts: new Array(months).fill(0) })),
  }
  const shares = trends.map((t) => monthNames.map((_, m) => trendShare(t, m, months)))
  // recent postings of the current month that a repost may copy (reposts stay in their month)
  let recent: { title: string; description: string; month: number; org: string; place: string; occ: string }[] = []
  let recentMonth = -1
  // lines are encoded straight into one reused buffer (joining two-byte strings is slow)
  const CHUNK = 8 * 1024 * 1024
  const buffer = Buffer.allocUnsafe(CHUNK)
  let used = 0
  const flush = () => {
    if (used === 0) return
    truth.bytes += used
    write(buffer.subarray(0, used))
    used = 0
  }
  for (let i = 0; i < opts.n; i++) {
    const idx = first + i
    const month = opts.onlyMonths ? opts.onlyMonths[i % opts.onlyMonths.length]! : Math.min(months - 1, Math.floor((i * months) / opts.n))
    const day = 1 + rng.int(28)
    const datePosted = `${monthNames[month]}-${String(day).padStart(2, '0')}`
    if (month !== recentMonth) {
      recent = []
      recentMonth = month
    }
    const roll = rng.next()
    let title: string
    let description: string
    let org: string
    let place: string
    let occ: string
    const source = recent.length > 0 && roll < repostRate + nearRate ? recent[rng.int(recent.length)]! : null
    if (source) {
      title = source.title
      description = roll < repostRate ? source.description : source.description + '\nApplications close at the end of the month.'
      org = source.org
      place = source.place
      occ = source.occ
      if (roll < repostRate) truth.reposts++
      else truth.nearReposts++
    } else {
      truth.originals[month]!++
      org = rng.pick(ORGS)
      place = rng.pick(PLACES)
      occ = rng.pick(OCCUPATIONS)
      title = `${rng.pick(FIRST)} ${rng.pick(ROLES)}`.trim()
      const skills: string[] = []
      for (let t = 0; t < trends.length; t++) {
        if (rng.next() < shares[t]![month]!) {
          skills.push(trends[t]!.phrase)
          truth.planted[t]!.counts[month]!++
        }
      }
      const k = Math.max(1, perPosting - 2 + rng.int(5))
      for (let j = 0; j < k; j++) {
        const b = backgroundLabels[zipf()]!
        skills.push(b.hidden.length && rng.next() < 0.03 ? rng.pick(b.hidden) : rng.pick(b.labels))
      }
      const parts: string[] = [`${org} is hiring a ${title} in ${place}.`]
      let size = parts[0]!.length
      let s = 0
      while (size < textBytes - title.length - 120 || s < skills.length) {
        let sentence: string
        if (s < skills.length && (rng.next() < 0.45 || size > textBytes * 0.7)) {
          const take = s + 1 < skills.length && rng.next() < 0.4 ? 2 : 1
          const named = skills.slice(s, s + take)
          s += take
          sentence = `${rng.pick(SKILL_LEAD)} ${named.join(' and ')} ${rng.pick(SKILL_TAIL)}`
        } else {
          sentence = rng.next() < 0.08 ? rng.pick(S_BENEFIT) : pool[rng.int(pool.length)]!
        }
        parts.push(sentence)
        size += sentence.length + 1
      }
      description = parts.join(rng.next() < 0.3 ? '\n' : ' ')
      if (recent.length < 512) recent.push({ title, description, month, org, place, occ })
      else recent[rng.int(512)] = { title, description, month, org, place, occ }
    }
    const posting = {
      '@context': 'https://schema.org',
      '@type': 'JobPosting',
      identifier: `fh-${String(idx).padStart(8, '0')}`,
      title,
      description,
      datePosted,
      occupationalCategory: occ,
      hiringOrganization: { '@type': 'Organization', name: org },
      jobLocation: { '@type': 'Place', address: { '@type': 'PostalAddress', addressLocality: place } },
    }
    const line = JSON.stringify(posting)
    truth.textBytes += title.length + description.length
    if (used + line.length * 3 + 1 > CHUNK) flush()
    used += buffer.write(line, used, 'utf8')
    buffer[used++] = 10
  }
  flush()
  return truth
}

/** Writes postings to a JSON Lines file; returns the truth and the seconds taken. */
export function writePostings(file: string, opts: CorpusOptions): CorpusTruth & { seconds: number } {
  fs.mkdirSync(path.dirname(file), { recursive: true })
  const fd = fs.openSync(file, 'w')
  const t0 = performance.now()
  try {
    const truth = generatePostings(opts, (text) => {
      fs.writeSync(fd, text)
    })
    return { ...truth, seconds: (performance.now() - t0) / 1000 }
  } finally {
    fs.closeSync(fd)
  }
}

/**
 * Generates (or reuses, when the files exist with the same parameters) the taxonomy CSV and the
 * postings file under bench/.work/. Returns the paths and the truth.
 */
export function ensureCorpus(opts: { n: number; months: number; seed?: number; dir?: string; concepts?: number; labels?: number; log?: (m: string) => void }): {
  taxonomyFile: string
  postingsFile: string
  truth: CorpusTruth
  taxonomy: GeneratedTaxonomy
  trends: PlantedTrend[]
} {
  const dir = opts.dir ?? WORK_DIR
  const seed = opts.seed ?? 7
  const concepts = opts.concepts ?? 20_000
  const taxonomy = generateTaxonomy({ concepts, labels: opts.labels ?? 80_000, seed })
  const trends = plantedTrends(taxonomy, seed)
  const taxonomyFile = path.join(dir, `taxonomy-${concepts}-s${seed}-v${CORPUS_VERSION}.csv`)
  if (!fs.existsSync(taxonomyFile)) writeTaxonomyCsv(taxonomyFile, taxonomy)
  const postingsFile = path.join(dir, `postings-${opts.n}-m${opts.months}-s${seed}-v${CORPUS_VERSION}.jsonl`)
  const truthFile = postingsFile.replace(/\.jsonl$/, '.truth.json')
  if (fs.existsSync(postingsFile) && fs.existsSync(truthFile)) {
    return { taxonomyFile, postingsFile, truth: JSON.parse(fs.readFileSync(truthFile, 'utf8')) as CorpusTruth, taxonomy, trends }
  }
  opts.log?.(`generating ${opts.n.toLocaleString('en-GB')} postings over ${opts.months} months -> ${postingsFile}`)
  const tmp = postingsFile + '.part'
  const truth = writePostings(tmp, { n: opts.n, months: opts.months, seed, taxonomy, trends })
  fs.renameSync(tmp, postingsFile)
  fs.writeFileSync(truthFile, JSON.stringify(truth) + '\n')
  opts.log?.(`  ${(truth.bytes / 1e6).toFixed(0)} MB in ${truth.seconds.toFixed(1)} s`)
  return { taxonomyFile, postingsFile, truth, taxonomy, trends }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const { values } = parseArgs({ options: { n: { type: 'string' }, months: { type: 'string' }, seed: { type: 'string' }, out: { type: 'string' } } })
  const n = Number(values.n ?? 100_000)
  const months = Number(values.months ?? 60)
  const seed = Number(values.seed ?? 7)
  const dir = values.out ?? WORK_DIR
  const t0 = performance.now()
  const taxonomy = generateTaxonomy({ seed })
  const taxonomyFile = path.join(dir, `taxonomy-${taxonomy.concepts.length}-s${seed}.csv`)
  writeTaxonomyCsv(taxonomyFile, taxonomy)
  const tTax = (performance.now() - t0) / 1000
  process.stdout.write(`taxonomy: ${taxonomy.concepts.length} concepts, ${taxonomy.labelCount} labels in ${tTax.toFixed(2)} s -> ${taxonomyFile}\n`)
  const file = path.join(dir, `postings-${n}-m${months}-s${seed}.jsonl`)
  const truth = writePostings(file, { n, months, seed, taxonomy })
  fs.writeFileSync(file.replace(/\.jsonl$/, '.truth.json'), JSON.stringify(truth) + '\n')
  process.stdout.write(
    `postings: ${n} (${truth.reposts} reposts, ${truth.nearReposts} near reposts), ${(truth.bytes / 1e6).toFixed(0)} MB, ` +
      `${(truth.textBytes / n).toFixed(0)} chars of text each, in ${truth.seconds.toFixed(1)} s (${(truth.bytes / 1e6 / truth.seconds).toFixed(0)} MB/s) -> ${file}\n`,
  )
}
