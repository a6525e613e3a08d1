/**
 * @module plan/course-flags
 * Course flags for course owners: retire, refresh or keep, each with reasons in plain words.
 *
 * - A course's skills are joined with their demand curves. The course's demand-weighted share is
 *   C(t) = Σ_s L_s·exp(r_s·t), with L_s the latest share of skill s and r_s its monthly log-rate
 *   (from its half-life, else its annual growth; 0 when unknown); the months until C halves are found
 *   by a monthly scan and bisection, with a fast and a slow end from the skills' interval ends.
 * - **retire**: the course's declining part halves soon (its declining and fading skills' own
 *   demand-weighted share halves within `courses.retireHalvingMonths`, or they are all fading, which
 *   the curves define as already rare and still falling), and either at least
 *   `courses.retireDecliningFraction` of the skills with evidence decline and enrolments do not rise,
 *   or at least `courses.retireFractionWhenEnrolmentsFall` decline and enrolments fall.
 * - **refresh**: some skills decline and rising skills are adjacent to them in postings (named, to be
 *   added); also a would-be retire whose enrolments still rise.
 * - **keep**: otherwise.
 */
import type { CourseRecord } from '../db/plan.ts'
import type { PlanConfig } from './config.ts'
import { DECLINING_STATES, halfLifeOf, type SkillCurve } from './curve-model.ts'

export type Flag = 'retire' | 'refresh' | 'keep'

export interface CourseSkillInput {
  ref: string
  id: string | null
  label: string
  inferred: boolean
  curve: SkillCurve | null
}

export interface AdjacentRising {
  id: string
  label: string
  score: number
  support: number
}

export interface CourseSkillView {
  ref: string
  id: string | null
  label: string
  inferred: boolean
  state: string | null
  latestShare: number | null
  annualGrowth: number | null
  halfLifeMonths: number | null
  halfLifeLow: number | null
  halfLifeHigh: number | null
}

export interface Halving {
  /** months until the course's demand-weighted share halves; null = not within maxMonths */
  months: number | null
  /** with every skill at the fast-decline end of its interval */
  low: number | null
  /** with every skill at the slow end */
  high: number | null
}

export interface CourseFlag {
  courseId: string
  title: string
  owner: string
  flag: Flag
  reasons: string[]
  skills: CourseSkillView[]
  unresolved: string[]
  decliningFraction: number | null
  /** the whole course's demand-weighted share */
  halving: Halving
  /** the demand-weighted share of its declining skills only */
  decliningHalving: Halving
  enrolment: { last12m: number | null; previous12m: number | null; trend: 'rising' | 'flat' | 'falling' | 'unknown' }
  /** rising skills to add (refresh), with the declining skill each is adjacent to */
  add: (AdjacentRising & { adjacentTo: string })[]
}

type CourseSettings = PlanConfig['courses']

/** A weighted sum of exponentials: weight w_i, monthly log-rate r_i. */
export interface WeightedRate {
  weight: number
  rate: number
}

/**
 * First month t in (0, maxMonths] with Σ w·exp(r·t) ≤ ½·Σ w, or null.
 * Scans month by month (the sum need not be monotone) and bisects inside the crossing month.
 * @example monthsToHalve([{ weight: 1, rate: -Math.LN2 / 18 }], 240) // => 18
 */
export function monthsToHalve(parts: readonly WeightedRate[], maxMonths: number): number | null {
  const total = parts.reduce((s, p) => s + p.weight, 0)
  if (!(total > 0)) return null
  const value = (t: number) => parts.reduce((s, p) => s + p.weight * Math.exp(p.rate * t), 0) - total / 2
  let prev = 0
  for (let t = 1; t <= maxMonths; t++) {
    if (value(t) <= 0) {
      let lo = prev
      let hi = t
      for (let i = 0; i < 60; i++) {
        const mid = (lo + hi) / 2
        if (value(mid) <= 0) hi = mid
        else lo = mid
      }
      return hi
    }
    prev = t
  }
  return null
}

function halving(skills: readonly CourseSkillInput[], maxMonths: number): Halving {
  const withCurve = skills.filter((s) => s.curve && s.curve.evidenced)
  if (withCurve.length === 0) return { months: null, low: null, high: null }
  const shares = withCurve.map((s) => Math.max(s.curve!.baseShare ?? 0, 0))
  const sum = shares.reduce((a, b) => a + b, 0)
  // demand-weighted; if no skill has a share yet, each counts the same
  const weights = sum > 0 ? shares : shares.map(() => 1)
  const build = (pickRate: (c: SkillCurve) => number | null) =>
    withCurve.map((s, i) => ({ weight: weights[i]!, rate: pickRate(s.curve!) ?? s.curve!.rate ?? 0 }))
  return {
    months: monthsToHalve(build((c) => c.rate), maxMonths),
    low: monthsToHalve(build((c) => c.rateLow), maxMonths),
    high: monthsToHalve(build((c) => c.rateHigh), maxMonths),
  }
}

function enrolmentTrend(course: CourseRecord, tolerance: number): CourseFlag['enrolment'] {
  const last = course.enrollments_12m
  const prev = course.enrollments_prev_12m
  let trend: CourseFlag['enrolment']['trend'] = 'unknown'
  if (last !== null && prev !== null) {
    if (prev === 0) trend = last > 0 ? 'rising' : 'flat'
    else if (last > prev * (1 + tolerance)) trend = 'rising'
    else if (last < prev * (1 - tolerance)) trend = 'falling'
    else trend = 'flat'
  }
  return { last12m: last, previous12m: prev, trend }
}

/** "14 months (11–19)" */
export function formatMonths(months: number | null, low: number | null = null, high: number | null = null, max = 240): string {
  if (months === null) return `not within ${max} months`
  const r = (x: number) => String(Math.round(x))
  if (low === null && high === null) return `${r(months)} months`
  return `${r(months)} months (${low === null ? '?' : r(low)}–${high === null ? `over ${max}` : r(high)})`
}

function skillPhrase(s: CourseSkillInput): string {
  const c = s.curve
  if (!c) return `${s.label} (no demand curve)`
  const h = halfLifeOf(c)
  if (h === null) return `${s.label} (${c.state})`
  return `${s.label} (${c.state}, half-life ${formatMonths(h, c.halfLifeLow, c.halfLifeHigh)})`
}

function listWords(items: readonly string[]): string {
  if (items.length <= 1) return items.join('')
  return `${items.slice(0, -1).join(', ')} and ${items[items.length - 1]}`
}

/**
 * Flags one course.
 * @param adjacent declining skill id -> rising skills adjacent to it, best first
 */
export function flagCourse(
  course: CourseRecord,
  skills: readonly CourseSkillInput[],
  unresolved: readonly string[],
  adjacent: ReadonlyMap<string, readonly AdjacentRising[]>,
  cfg: CourseSettings,
): CourseFlag {
  const reasons: string[] = []
  const evidenced = skills.filter((s) => s.curve && s.curve.evidenced)
  const declining = evidenced.filter((s) => DECLINING_STATES.includes(s.curve!.state))
  const fraction = evidenced.length ? declining.length / evidenced.length : null
  const half = halving(skills, cfg.maxMonths)
  const enrolment = enrolmentTrend(course, cfg.enrolmentTolerance)
  const inCourse = new Set(skills.map((s) => s.id).filter((x): x is string => x !== null))

  const addById = new Map<string, AdjacentRising & { adjacentTo: string }>()
  for (const d of declining) {
    for (const r of adjacent.get(d.id!) ?? []) {
      if (inCourse.has(r.id)) continue
      const seen = addById.get(r.id)
      if (!seen || r.score > seen.score) addById.set(r.id, { ...r, adjacentTo: d.id! })
    }
  }
  const add = [...addById.values()].sort((a, b) => b.score - a.score || (a.id < b.id ? -1 : 1)).slice(0, cfg.maxAdditions)

  const inferred = skills.filter((s) => s.inferred)
  if (inferred.length) reasons.push(`Skills mapped from the title (the course has no tags): ${listWords(inferred.map((s) => s.label))}.`)
  if (unresolved.length) reasons.push(`Tags that match no skill in the taxonomy: ${listWords(unresolved.map((u) => `"${u}"`))}.`)
  const noEvidence = skills.filter((s) => s.id !== null && !(s.curve && s.curve.evidenced))
  if (noEvidence.length && evidenced.length) reasons.push(`Not enough demand evidence yet for ${listWords(noEvidence.map((s) => s.label))}.`)

  let flag: Flag = 'keep'
  // "halves soon" is judged on the course's losing part: a steady co-skill must not hide a fading subject
  const decliningHalf = halving(declining, cfg.maxMonths)
  const allFading = declining.length > 0 && declining.every((s) => s.curve!.state === 'fading')
  const halvesSoon = allFading || (decliningHalf.months !== null && decliningHalf.months <= cfg.retireHalvingMonths)
  const mostlyDeclining = fraction !== null && fraction >= cfg.retireDecliningFraction
  const partlyDeclining = fraction !== null && fraction >= cfg.retireFractionWhenEnrolmentsFall
  // retire: mostly declining and learners not growing, or partly declining and learners leaving
  const retireLevel = halvesSoon && (mostlyDeclining || (partlyDeclining && enrolment.trend === 'falling'))
  const halvingText =
    half.months === null
      ? `the course's demand-weighted share does not halve within ${cfg.maxMonths} months${half.low !== null ? ` (at the fast end of the intervals it would in ${Math.round(half.low)})` : ''}`
      : `the course's demand-weighted share halves in ${formatMonths(half.months, half.low, half.high, cfg.maxMonths)}`
  const partText =
    declining.length < evidenced.length && decliningHalf.months !== null ? `; its declining part halves in ${formatMonths(decliningHalf.months, decliningHalf.low, decliningHalf.high, cfg.maxMonths)}` : ''
  const enrolText =
    enrolment.trend === 'unknown'
      ? 'enrolment trend unknown'
      : `enrolments ${enrolment.trend === 'flat' ? 'held steady' : enrolment.trend === 'rising' ? 'rose' : 'fell'} from ${enrolment.previous12m} to ${enrolment.last12m} over the last year`
  const addText = add.length ? `add ${listWords(add.map((a) => a.label))}, which rise${add.length === 1 ? 's' : ''} in postings that ask for ${listWords([...new Set(add.map((a) => labelOf(skills, a.adjacentTo)))])}` : ''
  const fadingText = allFading && (decliningHalf.months === null || decliningHalf.months > cfg.retireHalvingMonths) ? ' (fading: already rare and still falling)' : ''

  if (evidenced.length === 0) {
    reasons.push(skills.length ? 'No skill of this course has demand evidence yet, so there is nothing to judge.' : 'The course has no known skills, so there is nothing to judge.')
  } else if (retireLevel && enrolment.trend !== 'rising') {
    flag = 'retire'
    const what =
      declining.length === evidenced.length
        ? evidenced.length === 1
          ? 'Its only skill with demand evidence is'
          : `All ${evidenced.length} of its skills are`
        : `${declining.length} of its ${evidenced.length} skills are`
    reasons.push(`${what} losing demand${fadingText}: ${listWords(declining.map(skillPhrase))}; ${halvingText}${partText}; ${enrolText}.`)
    if (add.length) reasons.push(`A replacement could teach ${listWords(add.map((a) => a.label))} instead.`)
  } else if (retireLevel) {
    flag = 'refresh'
    reasons.push(`Its skills lose demand (${listWords(declining.map(skillPhrase))}; ${halvingText}${partText}), but ${enrolText}: refresh rather than retire${add.length ? `; ${addText}` : ''}.`)
  } else if (declining.length > 0 && add.length > 0) {
    flag = 'refresh'
    reasons.push(`${listWords(declining.map(skillPhrase))} ${declining.length === 1 ? 'loses' : 'lose'} demand while adjacent skills rise: ${addText}; ${halvingText}${partText}.`)
  } else if (declining.length > 0) {
    const why = !halvesSoon
      ? `${declining.length === 1 ? 'it falls' : 'they fall'} slower than retiring would call for (halving within ${cfg.retireHalvingMonths} months)`
      : 'the rest of the course holds its demand'
    reasons.push(`${listWords(declining.map(skillPhrase))} ${declining.length === 1 ? 'loses' : 'lose'} demand, but ${why}, and no rising skill is adjacent in postings; ${halvingText}; review again later.`)
  } else {
    reasons.push(`None of its skills is losing demand (${listWords(evidenced.map(skillPhrase))}).`)
  }

  return {
    courseId: course.course_id,
    title: course.title,
    owner: course.owner,
    flag,
    reasons,
    skills: skills.map((s) => ({
      ref: s.ref,
      id: s.id,
      label: s.label,
      inferred: s.inferred,
      state: s.curve?.state ?? null,
      latestShare: s.curve?.latestShare ?? null,
      annualGrowth: s.curve?.annualGrowth ?? null,
      halfLifeMonths: s.curve ? halfLifeOf(s.curve) : null,
      halfLifeLow: s.curve?.halfLifeLow ?? null,
      halfLifeHigh: s.curve?.halfLifeHigh ?? null,
    })),
    unresolved: [...unresolved],
    decliningFraction: fraction,
    halving: half,
    decliningHalving: decliningHalf,
    enrolment,
    add,
  }
}

function labelOf(skills: readonly CourseSkillInput[], id: string): string {
  return skills.find((s) => s.id === id)?.label ?? id
}
