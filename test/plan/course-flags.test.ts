import { describe, it, expect } from 'vitest'
import type { CourseRecord, CurveRecord } from '../../src/db/plan.ts'
import { flagCourse, monthsToHalve, type AdjacentRising, type CourseSkillInput } from '../../src/plan/course-flags.ts'
import { buildLabelIndex, mapTitle, resolveSkillRef } from '../../src/plan/course-skills.ts'
import { readSkillCurve } from '../../src/plan/curve-model.ts'
import { testConfig } from './fixtures.ts'

const cfg = testConfig().plan.courses
const LN2 = Math.log(2)

describe('months until a course’s demand-weighted share halves', () => {
  it('one skill: its half-life (closed form t = h)', () => {
    expect(monthsToHalve([{ weight: 1, rate: -LN2 / 18 }], 240)).toBeCloseTo(18, 9)
  })
  it('two equal-weight skills with half-lives 6 and 12: the golden-ratio root', () => {
    // 2^(-t/6) + 2^(-t/12) = 1; with x = 2^(-t/12): x² + x − 1 = 0, x = (√5 − 1)/2, t = 12·log2((1 + √5)/2) = 8.330903
    expect(monthsToHalve([{ weight: 1, rate: -LN2 / 6 }, { weight: 1, rate: -LN2 / 12 }], 240)).toBeCloseTo(12 * Math.log2((1 + Math.sqrt(5)) / 2), 9)
  })
  it('a steady half keeps the share from ever halving', () => {
    // (2^(-t/12) + 1)/2 > 1/2 for every finite t
    expect(monthsToHalve([{ weight: 1, rate: -LN2 / 12 }, { weight: 1, rate: 0 }], 240)).toBeNull()
  })
  it('finds the first crossing when the sum falls and rises again', () => {
    // C(t) = 2^(-t/2) + 0.2·2^(t/12): C(2) = 0.7245 > 0.6, C(3) = 0.5914 < 0.6, and C rises above 0.6 again later
    const t = monthsToHalve([{ weight: 1, rate: -LN2 / 2 }, { weight: 0.2, rate: LN2 / 12 }], 240)!
    expect(t).toBeGreaterThan(2)
    expect(t).toBeLessThan(3)
    expect(2 ** (-t / 2) + 0.2 * 2 ** (t / 12)).toBeCloseTo(0.6, 9)
  })
  it('beyond the horizon or without weight: null', () => {
    expect(monthsToHalve([{ weight: 1, rate: -LN2 / 300 }], 240)).toBeNull()
    expect(monthsToHalve([], 240)).toBeNull()
  })
})

function curveRow(id: string, over: Partial<CurveRecord>): CurveRecord {
  return {
    concept_id: id,
    state: 'steady',
    annual_growth: 0,
    growth_low: null,
    growth_high: null,
    half_life_months: null,
    half_life_low: null,
    half_life_high: null,
    p_value: null,
    p_adjusted: 0.01,
    latest_share: 0.05,
    forecast_share12: 0.05,
    details_json: '{}',
    fitted_at: '2026-01-01',
    ...over,
  }
}

const CURVES = {
  flash: readSkillCurve(curveRow('flash', { state: 'fading', annual_growth: -0.447, half_life_months: 14, half_life_low: 10, half_life_high: 20, latest_share: 0.004, forecast_share12: 0.0022 })),
  jquery: readSkillCurve(curveRow('jquery', { state: 'declining', annual_growth: -0.206, half_life_months: 36, half_life_low: 30, half_life_high: 45, latest_share: 0.04, forecast_share12: 0.0317 })),
  perl: readSkillCurve(curveRow('perl', { state: 'declining', half_life_months: 96, latest_share: 0.03, forecast_share12: 0.0275 })),
  html: readSkillCurve(curveRow('html', { state: 'steady', annual_growth: 0, latest_share: 0.1, forecast_share12: 0.1 })),
  python: readSkillCurve(curveRow('python', { state: 'steady', annual_growth: 0.01, latest_share: 0.18, forecast_share12: 0.182 })),
  vb6: readSkillCurve(curveRow('vb6', { state: 'fading', annual_growth: null, latest_share: 0.001, forecast_share12: 0.0005 })),
  cobol: readSkillCurve(curveRow('cobol', { state: 'insufficient-evidence', latest_share: null, forecast_share12: null })),
}

function skill(id: keyof typeof CURVES, inferred = false): CourseSkillInput {
  return { ref: id, id, label: id.toUpperCase(), inferred, curve: CURVES[id] }
}

function course(over: Partial<CourseRecord> = {}): CourseRecord {
  return { course_id: 'c1', title: 'A course', last_reviewed: null, enrollments_12m: 20, enrollments_prev_12m: 40, owner: 'o', ...over }
}

const ADJ = new Map<string, AdjacentRising[]>([
  ['jquery', [{ id: 'typescript', label: 'TypeScript', score: 1.3, support: 90 }, { id: 'html', label: 'HTML', score: 0.9, support: 50 }, { id: 'react', label: 'React', score: 0.8, support: 40 }]],
  ['flash', [{ id: 'canvas', label: 'HTML5 Canvas', score: 1.5, support: 70 }]],
])

describe('course flags on small synthetic curves', () => {
  it('retire: a fading skill with a short half-life and falling enrolments', () => {
    const f = flagCourse(course(), [skill('flash')], [], ADJ, cfg)
    expect(f.flag).toBe('retire')
    expect(f.halving.months).toBeCloseTo(14, 6)
    expect(f.halving.low).toBeCloseTo(10, 6)
    expect(f.halving.high).toBeCloseTo(20, 6)
    expect(f.reasons[0]).toMatch(/FLASH \(fading, half-life 14 months \(10–20\)\)/)
    expect(f.reasons[0]).toMatch(/enrolments fell from 40 to 20/)
    expect(f.reasons.join(' ')).toMatch(/HTML5 Canvas/)
    expect(f.skills[0]).toMatchObject({ id: 'flash', state: 'fading', halfLifeMonths: 14, halfLifeLow: 10, halfLifeHigh: 20 })
  })

  it('retire also with an unknown enrolment trend, which the reason says', () => {
    const f = flagCourse(course({ enrollments_12m: null }), [skill('flash')], [], ADJ, cfg)
    expect(f.flag).toBe('retire')
    expect(f.enrolment.trend).toBe('unknown')
    expect(f.reasons[0]).toMatch(/enrolment trend unknown/)
  })

  it('rising enrolments turn a would-be retire into refresh', () => {
    const f = flagCourse(course({ enrollments_12m: 60, enrollments_prev_12m: 40 }), [skill('flash')], [], ADJ, cfg)
    expect(f.flag).toBe('refresh')
    expect(f.reasons[0]).toMatch(/enrolments rose from 40 to 60/)
    expect(f.add.map((a) => a.id)).toEqual(['canvas'])
  })

  it('a fading skill without any rate still retires (nothing to compute a halving from)', () => {
    const f = flagCourse(course(), [skill('vb6')], [], ADJ, cfg)
    expect(f.halving.months).toBeNull()
    expect(f.flag).toBe('retire')
  })

  it('refresh: part of the skills declines while adjacent skills rise; names the additions', () => {
    const f = flagCourse(course({ enrollments_12m: 80, enrollments_prev_12m: 85 }), [skill('jquery'), skill('html')], [], ADJ, cfg)
    expect(f.flag).toBe('refresh')
    expect(f.decliningFraction).toBe(0.5)
    // HTML is already taught, so it is not proposed; at most maxAdditions (3), best first
    expect(f.add.map((a) => a.id)).toEqual(['typescript', 'react'])
    expect(f.add[0]!.adjacentTo).toBe('jquery')
    expect(f.reasons[0]).toMatch(/add TypeScript and React/)
    // 0.04·2^(-t/36) + 0.1 never falls to half of 0.14 (0.1 alone is more than 0.07)
    expect(f.halving.months).toBeNull()
  })

  it('keep: a declining skill that falls slowly and has no rising neighbour', () => {
    const f = flagCourse(course(), [skill('perl')], [], ADJ, cfg)
    expect(f.flag).toBe('keep')
    expect(f.halving.months).toBeCloseTo(96, 6)
    expect(f.reasons[0]).toMatch(/falls slower than retiring would call for \(halving within 30 months\)/)
  })

  it('keep: steady skills', () => {
    const f = flagCourse(course(), [skill('python'), skill('html')], [], ADJ, cfg)
    expect(f.flag).toBe('keep')
    expect(f.reasons[0]).toMatch(/None of its skills is losing demand/)
    expect(f.add).toEqual([])
  })

  it('missing data: no evidence, unknown tags and inferred skills are said so', () => {
    const none = flagCourse(course(), [skill('cobol')], ['mystery'], ADJ, cfg)
    expect(none.flag).toBe('keep')
    expect(none.decliningFraction).toBeNull()
    expect(none.reasons.join(' ')).toMatch(/"mystery"/)
    expect(none.reasons.join(' ')).toMatch(/nothing to judge/)
    const inferred = flagCourse(course(), [skill('flash', true), skill('cobol')], [], ADJ, cfg)
    expect(inferred.flag).toBe('retire')
    expect(inferred.reasons.join(' ')).toMatch(/mapped from the title/)
    expect(inferred.reasons.join(' ')).toMatch(/Not enough demand evidence yet for COBOL/)
  })

  it('a fading subject with a steady co-skill retires when learners leave, not while they stay', () => {
    // half the skills decline; the whole course never halves (Python holds), but its declining part is fading
    const falling = flagCourse(course(), [skill('flash'), skill('python')], [], ADJ, cfg)
    expect(falling.flag).toBe('retire')
    expect(falling.halving.months).toBeNull()
    expect(falling.decliningHalving.months).toBeCloseTo(14, 6)
    expect(falling.reasons[0]).toMatch(/1 of its 2 skills are losing demand/)
    expect(falling.reasons[0]).toMatch(/its declining part halves in 14 months/)
    const flat = flagCourse(course({ enrollments_12m: 40 }), [skill('flash'), skill('python')], [], ADJ, cfg)
    expect(flat.flag).toBe('refresh') // HTML5 Canvas is adjacent to Flash
    expect(flagCourse(course({ enrollments_12m: 40 }), [skill('flash'), skill('python')], [], new Map(), cfg).flag).toBe('keep')
  })

  it('thresholds come from config', () => {
    const at = (c: Record<string, unknown>) => testConfig({ courses: c }).plan.courses
    // jQuery's share halves in 36 months: too slow for the default 30, fast enough for 40
    expect(flagCourse(course(), [skill('jquery')], [], new Map(), cfg).flag).toBe('keep')
    expect(flagCourse(course(), [skill('jquery')], [], new Map(), at({ retireHalvingMonths: 40 })).flag).toBe('retire')
    // half declining with flat enrolments: retire only when half is enough
    const flat = course({ enrollments_12m: 40 })
    expect(flagCourse(flat, [skill('jquery'), skill('html')], [], new Map(), at({ retireHalvingMonths: 40 })).flag).toBe('keep')
    expect(flagCourse(flat, [skill('jquery'), skill('html')], [], new Map(), at({ retireHalvingMonths: 40, retireDecliningFraction: 0.5 })).flag).toBe('retire')
    // falling enrolments and a stricter share for that case
    expect(flagCourse(course(), [skill('jquery'), skill('html')], [], new Map(), at({ retireHalvingMonths: 40, retireFractionWhenEnrolmentsFall: 0.6 })).flag).toBe('keep')
  })
})

describe('course skill references', () => {
  const index = buildLabelIndex(
    ['kubernetes', 'go', 'visual-basic-6', 'basic', 'excel-a', 'excel-b'],
    [
      { concept_id: 'kubernetes', label: 'Kubernetes', kind: 'pref', case_sensitive: 0 },
      { concept_id: 'kubernetes', label: 'k8s', kind: 'alt', case_sensitive: 0 },
      { concept_id: 'go', label: 'Go', kind: 'pref', case_sensitive: 0 },
      { concept_id: 'visual-basic-6', label: 'Visual Basic 6', kind: 'pref', case_sensitive: 0 },
      { concept_id: 'basic', label: 'BASIC', kind: 'pref', case_sensitive: 0 },
      { concept_id: 'excel-a', label: 'Sheets', kind: 'alt', case_sensitive: 0 },
      { concept_id: 'excel-b', label: 'Sheets', kind: 'alt', case_sensitive: 0 },
      { concept_id: 'excel-b', label: 'Spreadsheets', kind: 'pref', case_sensitive: 0 },
    ],
  )
  it('resolves by id, then by any label without regard to case', () => {
    expect(resolveSkillRef(index, 'kubernetes')).toEqual({ id: 'kubernetes', by: 'id' })
    expect(resolveSkillRef(index, 'KUBERNETES')).toEqual({ id: 'kubernetes', by: 'label' })
    expect(resolveSkillRef(index, ' K8s ')).toEqual({ id: 'kubernetes', by: 'label' })
    expect(resolveSkillRef(index, 'nothing')).toBeNull()
  })
  it('refuses an ambiguous label', () => {
    expect(resolveSkillRef(index, 'sheets')).toBeNull()
  })
  it('maps titles on whole words, longest label first; short labels only in their own case', () => {
    expect(mapTitle(index, 'Legacy Visual Basic 6 upkeep').map((m) => m.id)).toEqual(['visual-basic-6'])
    expect(mapTitle(index, 'Go services on Kubernetes').map((m) => m.id)).toEqual(['go', 'kubernetes'])
    expect(mapTitle(index, 'Ready, set, go further')).toEqual([])
    expect(mapTitle(index, 'Kubernetesish')).toEqual([])
  })
})
