/**
 * @module ability/coverage
 * Skill coverage against role requirements, aware of measurement error.
 *
 * For a person with estimate θ̂ and standard error SE, the probability of meeting a required θreq
 * is p = Φ((θ̂ − θreq)/SE). For a group (a role, or all roles requiring a skill):
 *
 * - coverage = mean of p over assessed people (null when nobody is assessed);
 * - among the assessed: expected meeting Σp and expected gap assessed − Σp;
 * - over the whole headcount (the figures the issue asks for): expected meeting = headcount ×
 *   coverage and expected gap = headcount × (1 − coverage), i.e. the never-assessed are assumed to
 *   resemble the assessed for the point figure, while being counted apart as `unknown`;
 * - intervals: the number of assessed people truly meeting the requirement is a sum of independent
 *   Bernoulli(p_i), i.e. Poisson-binomial; take its central `level` interval [m₋, m₊] (exact up to
 *   2,000 people, normal beyond). Among the assessed the gap lies in [assessed − m₊, assessed − m₋].
 *   Over the headcount each never-assessed person may be anything from 0 to 1 (no information), so
 *   meeting ∈ [m₋, m₊ + unknown] and gap ∈ [assessed − m₊, assessed − m₋ + unknown]: conservative,
 *   it holds whatever the never-assessed can do, and contains the headcount point figure.
 *
 * With SE = 0 the probability is a step (θ̂ ≥ θreq). Reference for p: the normal approximation to the
 * sampling distribution of an IRT estimate (Baker 2001, ch. 5, https://eric.ed.gov/?id=ED458219).
 * O(n²) per group up to 2,000 assessed people, O(n) beyond.
 */
import { normalCdf } from './normal.ts'
import { poissonBinomialInterval } from './poisson-binomial.ts'

/** One person measured against one requirement. */
export interface PersonRequirement {
  personId: string
  requiredTheta: number
  /** the person's current ability in that skill, or null when never assessed */
  ability: { theta: number; se: number; stale?: boolean } | null
}

export interface CoverageSummary {
  headcount: number
  assessed: number
  unknown: number
  /** assessed people whose ability is stale (SE inflated) */
  stale: number
  /** mean Φ((θ̂ − θreq)/SE) over assessed people; null when none is assessed */
  coverage: number | null
  /** Σ p over assessed people */
  expectedMeetingAssessed: number
  /** assessed − Σ p */
  expectedGapAssessed: number
  /** [assessed − m₊, assessed − m₋] */
  gapIntervalAssessed: [number, number]
  /** headcount × coverage; null when nobody is assessed */
  expectedMeeting: number | null
  /** headcount × (1 − coverage); null when nobody is assessed */
  expectedGap: number | null
  /** [m₋, m₊ + unknown] people meeting the requirement */
  meetingInterval: [number, number]
  /** [assessed − m₊, assessed − m₋ + unknown], always defined (nobody assessed: [0, headcount]) */
  gapInterval: [number, number]
  level: number
}

/**
 * Probability that a person's true ability meets the requirement.
 *
 * @throws RangeError for a non-finite θ̂ or a negative or non-finite SE
 * @example meetProbability(0.5, 1, 0.5) // => 0.5
 * @example meetProbability(1.96, 1, 0) // => 0.975
 */
export function meetProbability(theta: number, se: number, requiredTheta: number): number {
  if (!Number.isFinite(theta)) throw new RangeError(`theta must be finite (got ${theta})`)
  if (!Number.isFinite(requiredTheta)) throw new RangeError(`required theta must be finite (got ${requiredTheta})`)
  if (!(se >= 0) || !Number.isFinite(se)) throw new RangeError(`standard error must be finite and >= 0 (got ${se})`)
  if (se === 0) return theta >= requiredTheta ? 1 : 0
  return normalCdf((theta - requiredTheta) / se)
}

/**
 * Summarise coverage for a group of people.
 *
 * @example
 * ```ts
 * summariseCoverage([
 *   { personId: 'p1', requiredTheta: 0, ability: { theta: 0, se: 0.5 } },
 *   { personId: 'p2', requiredTheta: 0, ability: null },
 * ]) // => { headcount: 2, assessed: 1, unknown: 1, coverage: 0.5, expectedGap: 1, gapInterval: [0, 2], ... }
 * ```
 */
export function summariseCoverage(rows: readonly PersonRequirement[], level = 0.95): CoverageSummary {
  const probabilities: number[] = []
  let stale = 0
  for (const row of rows) {
    if (!row.ability) continue
    probabilities.push(meetProbability(row.ability.theta, row.ability.se, row.requiredTheta))
    if (row.ability.stale) stale++
  }
  const headcount = rows.length
  const assessed = probabilities.length
  const unknown = headcount - assessed
  const sum = probabilities.reduce((s, p) => s + p, 0)
  const coverage = assessed > 0 ? sum / assessed : null
  const [low, high] = poissonBinomialInterval(probabilities, level)
  const meetingInterval: [number, number] = [low, high + unknown]
  return {
    headcount,
    assessed,
    unknown,
    stale,
    coverage,
    expectedMeetingAssessed: sum,
    expectedGapAssessed: assessed - sum,
    gapIntervalAssessed: [assessed - high, assessed - low],
    expectedMeeting: coverage === null ? null : headcount * coverage,
    expectedGap: coverage === null ? null : headcount * (1 - coverage),
    meetingInterval,
    gapInterval: [assessed - high, assessed - low + unknown],
    level,
  }
}
