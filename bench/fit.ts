/**
 * Curves benchmark (issue 5): fitting 20,000 skills × 60 months of external postings (goal < 5 s on
 * one core), the whole per-skill analysis (seasonal choice, change search, Mann–Kendall, Theil–Sen,
 * emergence, bursts, rolling-origin forecast choice) plus Benjamini–Hochberg across all skills.
 * Also the same with an internal requests series for a fifth of the skills, and a sparse corpus
 * (a tenth as many skills with a handful of mentions each) where no skill may fail. Synthetic seeded data
 * with known slopes; the recovery figure shows that a fast run is also a right one.
 * Standalone: `npx tsx bench/fit.ts [skills]`.
 */
import { DEFAULT_CURVES_CONFIG } from '../src/curves/config.ts'
import { fitAll } from '../src/curves/fit-all.ts'
import { monthLabel, monthIndex } from '../src/curves/months.ts'
import type { SkillSeriesInput } from '../src/curves/series.ts'
import { reportBench, type Figure } from './report.ts'

/** mulberry32 (public domain) */
function uniformSource(seed: number): () => number {
  let state = seed >>> 0
  return () => {
    state = (state + 0x6d2b79f5) >>> 0
    let t = state
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

const uniform = uniformSource(20240601)
function normal(): number {
  let u = uniform()
  while (u === 0) u = uniform()
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform())
}
/** Poisson draw: Knuth below 30, normal approximation above (enough for a benchmark corpus). */
function poisson(mean: number): number {
  if (mean < 30) {
    const limit = Math.exp(-mean)
    let count = 0
    let product = uniform()
    while (product > limit) {
      count++
      product *= uniform()
    }
    return count
  }
  return Math.max(0, Math.round(mean + Math.sqrt(mean) * normal()))
}

const SKILLS = Number(process.argv[2] ?? 20_000)
const MONTHS = 60
const months = Array.from({ length: MONTHS }, (_, i) => monthLabel(monthIndex('2021-01') + i))
const postings = months.map(() => 40_000 + Math.floor(uniform() * 8000))
const requests = months.map(() => 3000 + Math.floor(uniform() * 600))

function corpus(withInternal: boolean): { inputs: SkillSeriesInput[]; slopes: number[] } {
  const inputs: SkillSeriesInput[] = []
  const slopes: number[] = []
  for (let k = 0; k < SKILLS; k++) {
    // shares from 0.02% to 20%, slopes from −6% to +6% a month (half of them exactly flat)
    const base = Math.exp(-8.5 + 7 * uniform())
    const slope = k % 2 === 0 ? 0 : (uniform() - 0.5) * 0.12
    slopes.push(slope)
    const share = (t: number) => Math.min(0.5, base * Math.exp(slope * (t - MONTHS / 2)))
    const input: SkillSeriesInput = {
      id: `skill-${k}`,
      months,
      external: { n: postings.map((N, t) => Math.min(N, poisson(N * share(t) * Math.exp(0.05 * normal())))), N: postings },
    }
    if (withInternal && k % 5 === 0) input.internal = { n: requests.map((N, t) => Math.min(N, poisson(N * 0.3 * share(t - 2)))), N: requests }
    inputs.push(input)
  }
  return { inputs, slopes }
}

function run(label: string, withInternal: boolean, figures: Figure[]): void {
  const { inputs, slopes } = corpus(withInternal)
  const cpu0 = process.cpuUsage()
  const t0 = performance.now()
  const result = fitAll(inputs, DEFAULT_CURVES_CONFIG)
  const wall = (performance.now() - t0) / 1000
  const cpu = process.cpuUsage(cpu0)
  // recovery: the fitted current slope should be close to the planted one where data are plentiful
  let squared = 0
  let counted = 0
  let falseFlags = 0
  let nulls = 0
  result.curves.forEach((curve, k) => {
    if (slopes[k] === 0) {
      nulls++
      if (curve.state === 'rising' || curve.state === 'declining' || curve.state === 'fading' || curve.state === 'emerging') falseFlags++
    }
    if (curve.beta !== null && curve.details['mentions'] !== undefined && (curve.details['mentions'] as number) > 2000 && curve.changeMonth === null) {
      squared += (curve.beta - slopes[k]!) ** 2
      counted++
    }
  })
  const goal = `< ${((5 * SKILLS) / 20_000).toFixed(1)} s`
  figures.push({ figure: `${label}: ${SKILLS.toLocaleString('en-GB')} skills x ${MONTHS} months`, value: wall, unit: 's', goal, met: wall < (5 * SKILLS) / 20_000 })
  figures.push({ figure: '  of which CPU time (user + system)', value: (cpu.user + cpu.system) / 1e6, unit: 's' })
  figures.push({ figure: '  per skill', value: (wall * 1e6) / SKILLS, unit: 'µs' })
  figures.push({ figure: '  slope RMSE (skills with > 2,000 mentions)', value: Math.sqrt(squared / Math.max(1, counted)), unit: '/month' })
  figures.push({ figure: '  flat skills flagged (false discoveries)', value: falseFlags / Math.max(1, nulls), unit: 'share' })
  figures.push({ figure: '  skills that failed', value: result.failures.length, unit: '' })
}

/**
 * Very sparse skills, as a 20,000-concept taxonomy produces: 20 to 80 mentions bunched around a random
 * month of 60, half with an internal series that misses about 30% of months. None may fail (a
 * numerical failure must give insufficient-evidence or drop only an optional part).
 */
function sparseRun(figures: Figure[]): void {
  const count = Math.max(200, Math.round(SKILLS / 10))
  const inputs: SkillSeriesInput[] = []
  for (let k = 0; k < count; k++) {
    const total = 20 + Math.floor(uniform() * 60)
    const external = new Array<number>(MONTHS).fill(0)
    const internal = new Array<number>(MONTHS).fill(0)
    const internalN = months.map(() => (uniform() < 0.3 ? 0 : 100))
    const focus = Math.floor(uniform() * MONTHS)
    const spread = 1 + Math.floor(uniform() * MONTHS)
    for (let m = 0; m < total; m++) {
      const t = Math.min(MONTHS - 1, Math.max(0, focus + Math.floor((uniform() - 0.5) * spread)))
      if (k % 2 === 1 && uniform() < 0.2 && internalN[t]! > internal[t]!) internal[t]!++
      else external[t]!++
    }
    const input: SkillSeriesInput = { id: `sparse-${k}`, months, external: { n: external, N: postings.map((N) => Math.round(N / 40)) } }
    if (k % 2 === 1) input.internal = { n: internal, N: internalN }
    inputs.push(input)
  }
  const t0 = performance.now()
  const result = fitAll(inputs, DEFAULT_CURVES_CONFIG)
  const wall = (performance.now() - t0) / 1000
  const withState = result.curves.filter((curve) => curve.state).length
  const withOmitted = result.curves.filter((curve) => (curve.details['omittedParts'] as unknown[] | undefined)?.length).length
  const insufficient = result.curves.filter((curve) => curve.state === 'insufficient-evidence').length
  figures.push({ figure: `sparse skills: ${count.toLocaleString('en-GB')} skills with 20-80 mentions over ${MONTHS} months`, value: wall, unit: 's' })
  figures.push({ figure: '  skills that failed', value: result.failures.length, unit: '', goal: '0', met: result.failures.length === 0 })
  figures.push({ figure: '  curves with a state', value: withState, unit: '' })
  figures.push({ figure: '  insufficient-evidence', value: insufficient, unit: '' })
  figures.push({ figure: '  curves with an omitted optional part', value: withOmitted, unit: '' })
}

const figures: Figure[] = []
run('fit external only', false, figures)
run('fit with internal series (1 in 5)', true, figures)
sparseRun(figures)
reportBench('fit', figures)
