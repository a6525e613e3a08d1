import { describe, it, expect } from 'vitest'
import { poissonBinomialPmf, poissonBinomialInterval } from '../../src/ability/poisson-binomial.ts'
import { meetProbability, summariseCoverage, type PersonRequirement } from '../../src/ability/coverage.ts'
import { applyStaleness, currentAbilities, pickNewest, type StoredAbility } from '../../src/ability/current.ts'
import { suppressFields, suppressionReasons } from '../../src/ability/suppress.ts'
import { mulberry32 } from '../../src/ability/simulate.ts'

describe('Poisson-binomial distribution', () => {
  it('matches brute-force enumeration of all 2^n outcomes', () => {
    // independent check: enumerate every success pattern of 10 trials
    const rng = mulberry32(8)
    const p = Array.from({ length: 10 }, () => rng())
    const expected = new Array(11).fill(0)
    for (let mask = 0; mask < 1 << 10; mask++) {
      let prob = 1
      let k = 0
      for (let i = 0; i < 10; i++) {
        if (mask & (1 << i)) {
          prob *= p[i]
          k++
        } else prob *= 1 - p[i]
      }
      expected[k] += prob
    }
    const pmf = poissonBinomialPmf(p)
    expected.forEach((v, k) => expect(pmf[k]).toBeCloseTo(v, 14))
  })
  it('reduces to the binomial: Binomial(20, 0.5) central 95% interval is [6, 14]', () => {
    // R: qbinom(c(.025, .975), 20, .5) = 6 14 [M, standard table values]
    expect(poissonBinomialInterval(new Array(20).fill(0.5), 0.95)).toEqual([6, 14])
    // Binomial(10, 0.3): qbinom(c(.025,.975),10,.3) = 0 6 [M]
    expect(poissonBinomialInterval(new Array(10).fill(0.3), 0.95)).toEqual([0, 6])
  })
  it('normal approximation beyond the exact limit agrees with the exact interval', () => {
    const rng = mulberry32(4)
    const p = Array.from({ length: 1500 }, () => rng())
    const exact = poissonBinomialInterval(p, 0.95)
    const approx = poissonBinomialInterval(p, 0.95, 100)
    expect(Math.abs(exact[0] - approx[0])).toBeLessThanOrEqual(1)
    expect(Math.abs(exact[1] - approx[1])).toBeLessThanOrEqual(1)
  })
  it('degenerate inputs', () => {
    expect(poissonBinomialInterval([], 0.95)).toEqual([0, 0])
    expect(poissonBinomialInterval([1, 1, 0], 0.95)).toEqual([2, 2])
    expect(() => poissonBinomialInterval([0.5], 1)).toThrow(/level/)
  })
})

describe('SE-aware coverage', () => {
  it('meet probability is Φ((θ̂ − θreq)/SE)', () => {
    expect(meetProbability(0.5, 0.3, 0.5)).toBe(0.5)
    expect(meetProbability(1.959963984540054, 1, 0)).toBeCloseTo(0.975, 12) // z(0.975) [M, standard table]
    expect(meetProbability(0, 0.5, 1)).toBeCloseTo(0.0227501319, 9) // Φ(−2) = 0.02275 [M, standard table]
    expect(meetProbability(1, 0, 1)).toBe(1) // no error: a step
    expect(meetProbability(0.99, 0, 1)).toBe(0)
    expect(() => meetProbability(Number.NaN, 1, 0)).toThrow(/theta must be finite/)
    expect(() => meetProbability(0, -1, 0)).toThrow(/standard error/)
  })
  it('counts never-assessed people as unknown, not as zero or covered', () => {
    const rows: PersonRequirement[] = [
      { personId: 'a', requiredTheta: 0, ability: { theta: 1.959963984540054, se: 1 } },
      { personId: 'b', requiredTheta: 0, ability: { theta: -1.959963984540054, se: 1, stale: true } },
      { personId: 'c', requiredTheta: 0, ability: null },
      { personId: 'd', requiredTheta: 0, ability: null },
    ]
    const s = summariseCoverage(rows)
    expect(s).toMatchObject({ headcount: 4, assessed: 2, unknown: 2, stale: 1 })
    expect(s.coverage).toBeCloseTo(0.5, 12)
    expect(s.expectedMeetingAssessed).toBeCloseTo(1, 12)
    expect(s.expectedMeeting).toBeCloseTo(2, 12) // headcount × coverage
    expect(s.expectedGap).toBeCloseTo(2, 12) // headcount × (1 − coverage)
    // assessed: Poisson-binomial(0.975, 0.025) has pmf [0.024375, 0.95125, 0.024375] (by hand), so its central
    // 95% interval is [1, 1]; the two unknowns widen the meeting interval to [1, 3]
    expect(s.meetingInterval).toEqual([1, 1 + 2])
    expect(s.gapInterval).toEqual([1, 3])
    expect(s.expectedGapAssessed).toBeCloseTo(1, 12)
    expect(s.gapIntervalAssessed).toEqual([1, 1])
    expect(s.gapInterval[0]).toBeLessThanOrEqual(s.expectedGap!)
    expect(s.gapInterval[1]).toBeGreaterThanOrEqual(s.expectedGap!)
  })
  it('with nobody assessed, coverage and the point gap are unknown and the interval is [0, headcount]', () => {
    const s = summariseCoverage([
      { personId: 'a', requiredTheta: 1, ability: null },
      { personId: 'b', requiredTheta: 1, ability: null },
    ])
    expect(s).toMatchObject({ headcount: 2, assessed: 0, unknown: 2, coverage: null, expectedGap: null, expectedMeeting: null })
    expect(s.gapInterval).toEqual([0, 2])
    expect(s).toMatchObject({ expectedMeetingAssessed: 0, expectedGapAssessed: 0, gapIntervalAssessed: [0, 0] })
  })
  it('the gap interval holds in simulation when abilities are measured with the stated error', () => {
    // simulate true θ, report θ̂ = θ + SE·z; the true gap should fall in the interval at least 95% of the time
    // (the interval conditions on θ̂, so this checks calibration under a flat prior; common practice, no source)
    const rng = mulberry32(12)
    const normal = () => Math.sqrt(-2 * Math.log(1 - rng())) * Math.cos(2 * Math.PI * rng())
    let inside = 0
    const trials = 400
    for (let t = 0; t < trials; t++) {
      const rows: PersonRequirement[] = []
      let trulyMeeting = 0
      for (let i = 0; i < 40; i++) {
        const theta = 4 * rng() - 2 // spread wide relative to SE, so a flat prior is a fair approximation
        const se = 0.3 + 0.3 * rng()
        if (theta >= 0.2) trulyMeeting++
        rows.push({ personId: String(i), requiredTheta: 0.2, ability: { theta: theta + se * normal(), se } })
      }
      const s = summariseCoverage(rows)
      const gap = 40 - trulyMeeting
      if (gap >= s.gapInterval[0] && gap <= s.gapInterval[1]) inside++
    }
    expect(inside / trials).toBeGreaterThan(0.9)
  })
})

describe('current ability: newest wins, stale inflates the SE', () => {
  const base = { personId: 'p1', skillId: 'sql', theta: 0.4, se: 0.3 }
  it('the newer assessment wins whatever its origin; ties go to the estimate', () => {
    const imported: StoredAbility = { ...base, origin: 'import', assessedAt: '2025-03-01' }
    const estimated: StoredAbility = { ...base, origin: 'estimate', theta: 1.1, assessedAt: '2024-11-20T10:00:00Z' }
    expect(pickNewest([imported, estimated])).toEqual([imported])
    expect(pickNewest([{ ...estimated, assessedAt: '2025-04-01' }, imported])[0].origin).toBe('estimate')
    expect(pickNewest([imported, { ...estimated, assessedAt: '2025-03-01' }])[0].origin).toBe('estimate')
    expect(pickNewest([{ ...estimated, assessedAt: '2025-03-01' }, imported])[0].origin).toBe('estimate')
  })
  it('abilities older than staleAfterDays get SE × seInflation and a stale flag', () => {
    const now = new Date('2026-01-01T00:00:00Z')
    const options = { staleAfterDays: 365, seInflation: 1.5 }
    const fresh = applyStaleness({ ...base, origin: 'import', assessedAt: '2025-06-01' }, now, options)
    expect(fresh).toMatchObject({ stale: false, se: 0.3, seReported: 0.3 })
    const old = applyStaleness({ ...base, origin: 'import', assessedAt: '2023-06-01' }, now, options)
    expect(old.stale).toBe(true)
    expect(old.se).toBeCloseTo(0.45, 12)
    expect(old.seReported).toBe(0.3)
    expect(Math.round(old.ageDays)).toBe(945)
    // a stale ability counts for less: its meet probability moves towards 0.5
    expect(meetProbability(old.theta, old.se, 0)).toBeLessThan(meetProbability(fresh.theta, fresh.se, 0))
  })
  it('rejects bad dates and settings, naming the person and skill', () => {
    const now = new Date('2026-01-01')
    expect(() => applyStaleness({ ...base, origin: 'import', assessedAt: 'last spring' }, now, { staleAfterDays: 30, seInflation: 2 })).toThrow(
      /ability of p1 in sql: not an ISO 8601 date/,
    )
    expect(() => applyStaleness({ ...base, origin: 'import', assessedAt: '2025-01-01' }, now, { staleAfterDays: 30, seInflation: 0.5 })).toThrow(/seInflation/)
  })
  it('currentAbilities keys by person and skill', () => {
    const map = currentAbilities(
      [
        { ...base, origin: 'import', assessedAt: '2025-01-01' },
        { ...base, skillId: 'python', origin: 'estimate', assessedAt: '2025-02-01' },
      ],
      new Date('2025-06-01'),
      { staleAfterDays: 730, seInflation: 1.5 },
    )
    expect([...map.get('p1')!.keys()].sort()).toEqual(['python', 'sql'])
  })
})

describe('small-group suppression', () => {
  it('suppresses groups below the minimum (default 5)', () => {
    expect(suppressionReasons([{ size: 4, family: 'a' }, { size: 5, family: 'b' }])).toEqual(['small-group', null])
    expect(suppressionReasons([{ size: 4, family: 'a' }], 3)).toEqual([null])
    expect(() => suppressionReasons([], 0)).toThrow(/minGroupSize/)
  })
  it('adds complementary suppression so a total cannot give a hidden group back', () => {
    const rows = [
      { size: 3, family: 'sql' },
      { size: 9, family: 'sql' },
      { size: 20, family: 'sql' },
      { size: 32, family: 'sql', isTotal: true },
    ]
    expect(suppressionReasons(rows)).toEqual(['small-group', 'complementary', null, null])
    // two small groups whose sum is still below the minimum: suppress more
    expect(
      suppressionReasons([
        { size: 1, family: 'x' },
        { size: 2, family: 'x' },
        { size: 8, family: 'x' },
        { size: 11, family: 'x', isTotal: true },
      ]),
    ).toEqual(['small-group', 'small-group', 'complementary', null])
    // a lone part and its total: hiding the part means hiding the total
    expect(suppressionReasons([{ size: 6, family: 'y' }, { size: 2, family: 'y' }, { size: 8, family: 'y', isTotal: true }])).toEqual([
      'complementary',
      'small-group',
      null,
    ])
  })
  it('suppressFields nulls the named fields and says why', () => {
    const rows = [
      { role: 'analyst', assessed: 2, coverage: 0.7 },
      { role: 'steward', assessed: 12, coverage: 0.4 },
    ]
    const out = suppressFields(rows, (r) => ({ size: r.assessed, family: r.role }), ['coverage'])
    expect(out[0]).toEqual({ role: 'analyst', assessed: 2, coverage: null, suppressed: 'small-group' })
    expect(out[1]).toEqual({ role: 'steward', assessed: 12, coverage: 0.4, suppressed: null })
  })
})
