/**
 * The demo's random streams, people, item banks and simulated responses. The response simulation is
 * checked against the project's independent 2PL implementation (src/ability/response-function.ts):
 * within bins of predicted probability, the observed share correct must match the prediction.
 */
import { describe, expect, it } from 'vitest'
import { probability } from '../../src/ability/response-function.ts'
import { mulberry32 } from '../../src/ability/simulate.ts'
import { generateCourses } from '../../src/demo/courses.ts'
import { ROLES } from '../../src/demo/org.ts'
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'
import { Rng, WeightedPicker, deriveSeed } from '../../src/demo/prng.ts'
import { ASSESSED_SKILLS, IMPORTED_SKILLS, generateAssessments, generatePeople } from '../../src/demo/workforce.ts'

describe('demo random streams', () => {
  it('matches an independent mulberry32 implementation draw for draw', () => {
    for (const seed of [0, 1, 42, 0xdeadbeef]) {
      const ours = new Rng(seed)
      const theirs = mulberry32(seed)
      for (let i = 0; i < 1000; i++) expect(ours.next()).toBe(theirs())
    }
  })

  it('derives distinct streams for distinct seeds and names', () => {
    const seen = new Set<number>()
    for (let seed = 0; seed < 300; seed++) for (const name of ['postings', 'requests', 'people', 'assessments', 'courses']) seen.add(deriveSeed(seed, name))
    expect(seen.size).toBe(1500)
  })

  it('draws uniforms, normals and weighted picks with the right moments', () => {
    const rng = new Rng(9)
    const n = 100_000
    let sum = 0
    let sumSq = 0
    const bins = new Array<number>(10).fill(0)
    for (let i = 0; i < n; i++) {
      const u = rng.next()
      bins[Math.floor(u * 10)]!++
      const z = rng.normal()
      sum += z
      sumSq += z * z
    }
    // chi-square with 9 degrees of freedom: 21.67 is the 0.99 quantile (standard table value)
    const chi = bins.reduce((a, o) => a + (o - n / 10) ** 2 / (n / 10), 0)
    expect(chi).toBeLessThan(21.67)
    expect(Math.abs(sum / n)).toBeLessThan(0.015)
    expect(Math.abs(sumSq / n - 1)).toBeLessThan(0.02)
    const picker = new WeightedPicker(['a', 'b', 'c'], [1, 2, 7])
    const counts: Record<string, number> = { a: 0, b: 0, c: 0 }
    for (let i = 0; i < n; i++) counts[picker.pick(rng)]!++
    expect(counts['a']! / n).toBeCloseTo(0.1, 2)
    expect(counts['c']! / n).toBeCloseTo(0.7, 2)
    expect(() => new WeightedPicker(['a'], [0])).toThrow(/positive total weight/)
  })
})

describe('demo workforce', () => {
  const people = generatePeople(4, 3000)
  const work = generateAssessments(4, people, '2025-06-15')

  it('has about 3,000 people in 15 roles with 4 to 10 requirements each', () => {
    expect(Math.abs(people.length - 3000)).toBeLessThan(20)
    expect(new Set(people.map((p) => p.role.name)).size).toBe(15)
    expect(new Set(people.map((p) => p.id)).size).toBe(people.length)
    for (const r of ROLES) {
      expect(r.requires.length, r.name).toBeGreaterThanOrEqual(4)
      expect(r.requires.length, r.name).toBeLessThanOrEqual(10)
    }
  })

  it('has 2PL item banks for twenty skills and 100k-200k responses', () => {
    expect(new Set(work.items.map((i) => i.skill_id)).size).toBe(20)
    for (const i of work.items) {
      expect(i.c).toBeNull()
      expect(i.a).toBeGreaterThanOrEqual(0.4)
      expect(i.a).toBeLessThanOrEqual(2.5)
    }
    expect(work.responses.length).toBeGreaterThan(100_000)
    expect(work.responses.length).toBeLessThan(200_000)
  })

  it('simulates responses that follow the 2PL model (checked with src/ability/response-function.ts)', () => {
    const items = new Map(work.items.map((i) => [i.item_id, { a: i.a, b: i.b, c: 0 }]))
    const theta = new Map(work.trueAbilities.map((t) => [`${t.person_id}|${t.skill_id}`, t.theta]))
    const bins = Array.from({ length: 10 }, () => ({ n: 0, correct: 0, expected: 0, variance: 0 }))
    for (const r of work.responses) {
      const item = items.get(r.item_id)!
      const skill = r.item_id.replace(/-\d+$/, '')
      const p = probability(theta.get(`${r.person_id}|${skill}`)!, item)
      const bin = bins[Math.min(9, Math.floor(p * 10))]!
      bin.n++
      bin.correct += r.response
      bin.expected += p
      bin.variance += p * (1 - p)
    }
    for (const [i, bin] of bins.entries()) {
      expect(bin.n, `bin ${i}`).toBeGreaterThan(500)
      // observed correct within four standard errors of the sum of predicted probabilities
      expect(Math.abs(bin.correct - bin.expected), `bin ${i}`).toBeLessThan(4 * Math.sqrt(bin.variance))
    }
  })

  it('imports ready-made estimates for other skills, some older than two years', () => {
    expect(new Set(work.abilities.map((a) => a.skill_id))).toEqual(new Set(IMPORTED_SKILLS))
    const cutoff = '2023-06-15'
    const stale = work.abilities.filter((a) => a.assessed_at < cutoff)
    expect(stale.length).toBeGreaterThan(100)
    expect(stale.length).toBeLessThan(work.abilities.length / 2)
    for (const a of work.abilities) expect(a.se).toBeGreaterThan(0)
    for (const id of ASSESSED_SKILLS) expect(IMPORTED_SKILLS).not.toContain(id)
  })
})

describe('demo course catalogue', () => {
  const courses = generateCourses(4, 36, '2025-06-15')
  const skillOf = (c: (typeof courses)[number]) => PLANTED_SKILLS.find((p) => c.skills.split('|')[0] === p.id || c.title.includes(p.phrase))

  it('has about 150 courses with owners, heavy on declining skills and light on emerging ones', () => {
    expect(courses.length).toBe(150)
    expect(new Set(courses.map((c) => c.course_id)).size).toBe(150)
    for (const c of courses) expect(c.owner).toMatch(/^\S+ \S+$/)
    expect(courses.filter((c) => c.skills.includes('retrieval-augmented-generation') || c.skills.includes('vector-databases'))).toEqual([])
  })

  it('shows falling enrolments on declining skills and rising ones on rising skills', () => {
    const ratio = (kinds: string[]) => {
      const list = courses.filter((c) => kinds.includes(skillOf(c)?.shape.kind ?? ''))
      return list.reduce((a, c) => a + c.enrollments_12m, 0) / list.reduce((a, c) => a + c.enrollments_prev_12m, 0)
    }
    expect(ratio(['declining', 'fading'])).toBeLessThan(0.85)
    expect(ratio(['rising'])).toBeGreaterThan(1.15)
    // declining-skill courses were reviewed long ago
    const old = courses.filter((c) => ['declining', 'fading'].includes(skillOf(c)?.shape.kind ?? '') && c.last_reviewed !== '')
    expect(old.every((c) => c.last_reviewed < '2023-08-01')).toBe(true)
  })
})
