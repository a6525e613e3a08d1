import { describe, it, expect } from 'vitest'
import { countTitles, type PostingConcepts } from '../db/title-counts-reference.ts'
import { countCoOccurrence } from '../../src/plan/adjacency.ts'
import type { SkillCurve } from '../../src/plan/curve-model.ts'
import { buildPathways, findCandidates } from '../../src/plan/pathways.ts'
import { addMonths, anyRoleMatcher, roleMatcher, suggestRequirements, twoProportionP } from '../../src/plan/role-suggestions.ts'
import { months, testConfig } from './fixtures.ts'

/** Composite Simpson rule for 1 − Φ(z), written here independently of src/stats. */
function upperTail(z: number): number {
  const f = (t: number) => Math.exp((-t * t) / 2) / Math.sqrt(2 * Math.PI)
  const upper = z + 12
  const n = 20_000
  const h = (upper - z) / n
  let sum = f(z) + f(upper)
  for (let i = 1; i < n; i++) sum += (i % 2 ? 4 : 2) * f(z + i * h)
  return (sum * h) / 3
}

describe('month arithmetic', () => {
  it('shifts across years and refuses other formats', () => {
    expect(addMonths('2024-01', -1)).toBe('2023-12')
    expect(addMonths('2024-12', 1)).toBe('2025-01')
    expect(addMonths('2024-05', -24)).toBe('2022-05')
    expect(() => addMonths('2024-5', 1)).toThrow(/YYYY-MM/)
  })
})

describe('two-proportion z-test', () => {
  it('30/100 against 10/100', () => {
    // pooled p = 0.2; z = 0.2/√(0.2·0.8·(2/100)) = 3.5355339; R: prop.test(c(30,10), c(100,100),
    // alternative = "greater", correct = FALSE) reports X-squared = 12.5 (= z²) and p ≈ 2.03e-4 [from memory];
    // checked here against numerical integration of the normal density
    const p = twoProportionP(30, 100, 10, 100)!
    expect(p).toBeCloseTo(upperTail(0.2 / Math.sqrt(0.2 * 0.8 * 0.02)), 9)
    expect(p).toBeGreaterThan(2.0e-4)
    expect(p).toBeLessThan(2.1e-4)
  })
  it('undefined when nothing (or everything) is seen, or a window is empty', () => {
    expect(twoProportionP(0, 10, 0, 10)).toBeNull()
    expect(twoProportionP(10, 10, 10, 10)).toBeNull()
    expect(twoProportionP(3, 10, 0, 0)).toBeNull()
  })
})

describe('role matching', () => {
  it('exact occupation codes and whole-word keywords in title or occupation', () => {
    const m = roleMatcher(['15-2051', 'analyst'])
    expect(m({ title: 'Senior Data Analyst', occupation: null })).toBe(true)
    expect(m({ title: 'Modeller', occupation: '15-2051' })).toBe(true)
    expect(m({ title: 'Analysts wanted', occupation: null })).toBe(false)
    expect(m({ title: 'Web Developer', occupation: '15-1254' })).toBe(false)
  })

  it('anyRoleMatcher: a posting of any role (by name or configured occupations), as roleMatcher decides each', () => {
    const cfg = { roleOccupations: { 'Data Analyst': ['15-2051', 'analyst'] } }
    const any = anyRoleMatcher(['Data Analyst', 'Web Developer'], cfg)
    expect(any('Senior Data Analyst', null)).toBe(true)
    expect(any('Modeller', '15-2051')).toBe(true)
    expect(any('Junior Web Developer', null)).toBe(true) // no occupations configured: the role's name
    expect(any('Analysts wanted', null)).toBe(false)
    expect(any('Modeller', null)).toBe(false)
    // remembered per title and occupation: the same pair twice gives the same answer
    expect(any('Modeller', '15-2051')).toBe(true)
    expect(anyRoleMatcher([], cfg)('Senior Data Analyst', null)).toBe(false)
  })
})

function rising(id: string): SkillCurve {
  return { id, state: 'rising', evidenced: true, annualGrowth: 0.3, pAdjusted: 0.01, latestShare: 0.05, baseShare: 0.05, forecastShare12: 0.065, halfLifeMonths: null, halfLifeLow: null, halfLifeHigh: null, rate: Math.log(1.3) / 12, rateLow: null, rateHigh: null, bands: [], bandLevel: 0.95, lastMonth: null }
}

describe('suggested requirements', () => {
  // 24 months of postings for a data analyst occupation: 5 a month. Prompt engineering goes from none
  // to 3 of 5; Excel stays at 2 of 5; SQL appears once; dbt goes from 1 in 6 to 1 in 5 (not significant,
  // but its curve is rising); MLOps goes from 12 to 13 of 60 (rising curve, but +8% < minRise 25%);
  // python is already required. Web postings are not the role's.
  const docs: PostingConcepts[] = []
  months('2024-01', 24).forEach((month, mi) => {
    const recent = mi >= 12
    for (let i = 0; i < 5; i++) {
      const concepts = ['python']
      if (recent && i < 3) concepts.push('prompt-engineering')
      if (i >= 3) concepts.push('excel')
      if (recent && mi === 20 && i === 0) concepts.push('sql')
      if (i === 0 || (mi === 23 && i === 1)) concepts.push('mlops')
      if (recent ? i === 4 || (mi % 6 === 0 && i === 3) || i === 3 : mi % 5 === 0 || (mi % 3 === 0 && i === 2)) concepts.push('dbt')
      docs.push({ month, title: i === 4 ? 'Financial Analyst' : 'Reporting', occupation: i === 4 ? null : '15-2051', concepts })
    }
    for (let i = 0; i < 5; i++) docs.push({ month, title: 'Web Developer', occupation: '15-1254', concepts: ['prompt-engineering', 'react'] })
  })
  const cfg = testConfig({ roleOccupations: { 'Data Analyst': ['15-2051', 'analyst'] } }).plan
  const input = {
    roles: ['Data Analyst'],
    requirements: new Map([['Data Analyst', new Set(['python'])]]),
    titles: countTitles(docs),
    latestMonth: '2025-12',
    curves: new Map([['dbt', rising('dbt')], ['mlops', rising('mlops')]]),
    labels: new Map([['prompt-engineering', 'prompt engineering']]),
  }

  it('suggests skills asked for increasingly (significant) or rising, lacking from the role', () => {
    const out = suggestRequirements(input, cfg)
    expect(out.map((s) => s.skillId).sort()).toEqual(['dbt', 'prompt-engineering'])
    const prompt = out.find((s) => s.skillId === 'prompt-engineering')!
    expect(prompt).toMatchObject({ role: 'Data Analyst', label: 'prompt engineering', recentPostings: 60, recentMentions: 36, earlierPostings: 60, earlierMentions: 0, recentShare: 0.6, earlierShare: 0 })
    expect(prompt.pValue!).toBeLessThan(1e-6)
    expect(prompt.pAdjusted!).toBeGreaterThanOrEqual(prompt.pValue!)
    expect(prompt.pAdjusted!).toBeLessThan(1e-5)
    expect(prompt.reason).toMatch(/60% of the last 12 months' 60 postings/)
    const dbt = out.find((s) => s.skillId === 'dbt')!
    expect(dbt.pValue!).toBeGreaterThan(0.05)
    expect(dbt.reason).toMatch(/rising across all postings/)
    // MLOps rose too little within the role; with no minimum rise it would be suggested
    const loose = testConfig({ roleOccupations: { 'Data Analyst': ['15-2051', 'analyst'] }, suggestions: { minRise: 0 } }).plan
    expect(suggestRequirements(input, loose).map((x) => x.skillId)).toContain('mlops')
  })

  it('the role’s own name is the default keyword; too few postings suggest nothing', () => {
    const byName = suggestRequirements({ ...input, roles: ['Web Developer'], requirements: new Map() }, testConfig().plan)
    // web developer postings ask for the same skills in both windows: nothing increases
    expect(byName).toEqual([])
    expect(suggestRequirements(input, testConfig({ roleOccupations: { 'Data Analyst': ['15-2051'] }, suggestions: { minPostings: 100 } }).plan)).toEqual([])
    expect(suggestRequirements({ ...input, latestMonth: null }, cfg)).toEqual([])
  })
})

describe('pathways and candidates', () => {
  const curves = new Map<string, SkillCurve>([
    ['jquery', { ...rising('jquery'), state: 'declining', halfLifeMonths: 36, rate: -Math.log(2) / 36 }],
    ['typescript', rising('typescript')],
    ['react', rising('react')],
    ['html', { ...rising('html'), state: 'steady' }],
  ])
  const docs = [
    ...Array.from({ length: 6 }, () => ['jquery', 'typescript']),
    ...Array.from({ length: 2 }, () => ['jquery', 'react']),
    ...Array.from({ length: 6 }, () => ['react']),
    ...Array.from({ length: 6 }, () => ['html', 'jquery']),
  ]
  const co = countCoOccurrence(docs)
  const labels = new Map([['typescript', 'TypeScript']])

  it('lists the rising skills most adjacent to each declining one', () => {
    // n = 20; n_jquery = 14, n_ts = 6, n_react = 8; PMI(jquery, ts) = log2(6·20/(14·6)) = 0.5146; PMI(jquery, react) = log2(2·20/(14·8)) < 0
    const paths = buildPathways(co, curves, labels, { method: 'ppmi', minSupport: 2, months: 0, topK: 3 })
    expect(paths).toHaveLength(1)
    expect(paths[0]!.skillId).toBe('jquery')
    expect(paths[0]!.targets.map((t) => t.id)).toEqual(['typescript'])
    expect(paths[0]!.targets[0]!.score).toBeCloseTo(Math.log2(120 / 84), 12)
    expect(paths[0]!.targets[0]!.label).toBe('TypeScript')
  })

  it('counts people strong in the declining skill who lack the rising one; names only on request', () => {
    const paths = buildPathways(co, curves, labels, { method: 'ppmi', minSupport: 2, months: 0, topK: 3 })
    const people = ['p1', 'p2', 'p3', 'p4'].map((person_id) => ({ person_id, role: 'Web Developer' }))
    const ab = (person_id: string, skill_id: string, theta: number) => ({ person_id, skill_id, theta, se: 0.3, assessed_at: '2025-01-01' })
    // requirement for jquery 0.5: p1, p2, p3 strong, p4 not; typescript requirement 0.8: p1 has it, p2 below, p3 unassessed
    const abilities = [ab('p1', 'jquery', 1), ab('p2', 'jquery', 0.6), ab('p3', 'jquery', 0.5), ab('p4', 'jquery', 0.2), ab('p1', 'typescript', 1), ab('p2', 'typescript', 0.3)]
    const requirements = new Map([['Web Developer', new Map([['jquery', 0.5], ['typescript', 0.8]])]])
    const cfg = testConfig().plan.reskilling
    const [group] = findCandidates({ people, abilities, requirements, pathways: paths }, cfg, false)
    expect(group).toMatchObject({ role: 'Web Developer', decliningSkill: 'jquery', strong: 3, candidates: 2 })
    expect(group!.targets).toEqual([{ id: 'typescript', label: 'TypeScript', lacking: 2, unassessed: 1 }])
    expect(group!.people).toBeUndefined()
    const [named] = findCandidates({ people, abilities, requirements, pathways: paths }, cfg, true)
    expect(named!.people!.map((p) => p.personId)).toEqual(['p2', 'p3'])
    // without a stated requirement the threshold is strongTheta (0): p4 counts as strong in jquery too
    const loose = findCandidates({ people, abilities, requirements: new Map(), pathways: paths }, cfg, false)
    expect(loose[0]!.strong).toBe(4)
  })
})
