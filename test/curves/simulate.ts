/**
 * @module test/curves/simulate
 * Seeded monthly demand series for curve tests: planted shapes of the demo (src/demo/planted.ts via
 * shareAt) and simple shapes with known half-lives, with binomial sampling and optional
 * overdispersion. Test helper only.
 */
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'
import { shareAt } from '../../src/demo/skills.ts'
import { monthLabel, monthIndex } from '../../src/curves/months.ts'
import type { SkillSeriesInput } from '../../src/curves/series.ts'
import { seededRandom } from '../stats/seeded-random.ts'
import type { SeededRandom } from '../stats/seeded-random.ts'

export function monthRange(first: string, count: number): string[] {
  const start = monthIndex(first)
  return Array.from({ length: count }, (_, i) => monthLabel(start + i))
}

/** Draw n ~ Binomial(N, share · multiplicative noise), the noise lognormal with sd `extra` on the log scale. */
export function drawCounts(random: SeededRandom, totals: readonly number[], shares: readonly number[], extra = 0): number[] {
  return totals.map((total, t) => {
    const noisy = shares[t]! * Math.exp(extra * random.normal() - (extra * extra) / 2)
    return random.binomial(total, Math.min(0.95, Math.max(0, noisy)))
  })
}

/** The demo's planted skills as the curves stage would see them: 2,000 postings and 400 requests a month. */
export function plantedInputs(seed: number, months = 36, options: { extra?: number; internal?: boolean } = {}): { input: SkillSeriesInput; expected: string }[] {
  const random = seededRandom(seed)
  const monthNames = monthRange('2023-01', months)
  const postings = monthNames.map(() => 1800 + Math.floor(random.uniform() * 400))
  const requests = monthNames.map(() => 360 + Math.floor(random.uniform() * 80))
  return PLANTED_SKILLS.map((skill) => {
    const external = monthNames.map((_, t) => shareAt(skill.shape, skill.baseShare, t, months))
    const internal = monthNames.map((_, t) => Math.max(0, 0.15 * shareAt(skill.shape, skill.baseShare, t - 3, months)))
    const input: SkillSeriesInput = {
      id: skill.id,
      label: skill.phrase,
      months: monthNames,
      external: { n: drawCounts(random, postings, external, options.extra ?? 0), N: postings },
    }
    if (options.internal !== false) input.internal = { n: drawCounts(random, requests, internal, options.extra ?? 0), N: requests }
    return { input, expected: skill.expectedState }
  })
}
