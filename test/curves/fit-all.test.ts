import { describe, it, expect } from 'vitest'
import { fitAll } from '../../src/curves/fit-all.ts'
import { fitSkill } from '../../src/curves/fit-skill.ts'
import { benjaminiHochberg } from '../../src/stats/benjamini-hochberg.ts'
import { DEFAULT_CURVES_CONFIG } from '../../src/curves/config.ts'
import { seededRandom } from '../stats/seeded-random.ts'
import { drawCounts, monthRange } from './simulate.ts'

const MONTHS = monthRange('2023-01', 36)

function skill(id: string, seed: number, slope: number) {
  const random = seededRandom(seed)
  const N = MONTHS.map(() => 2000)
  return { id, months: MONTHS, external: { n: drawCounts(random, N, MONTHS.map((_, t) => 0.02 * Math.exp(slope * t))), N } }
}

describe('fitAll', () => {
  it('adjusts the skills’ p-values together by Benjamini–Hochberg', () => {
    const inputs = [skill('a', 1, 0), skill('b', 2, 0.01), skill('c', 3, -0.02), skill('d', 4, 0.003), skill('e', 5, 0)]
    const result = fitAll(inputs, DEFAULT_CURVES_CONFIG)
    const raw = result.curves.map((curve) => curve.pValue!)
    const expected = benjaminiHochberg(raw, 0.05).adjusted
    result.curves.forEach((curve, i) => expect(curve.pAdjusted).toBeCloseTo(expected[i]!, 15))
    // alone, a skill is its own family: adjusted = raw
    const alone = fitSkill(inputs[3]!, DEFAULT_CURVES_CONFIG)
    expect(alone.pAdjusted).toBe(alone.pValue)
    expect(result.tested).toBe(5)
  })

  it('reports a malformed skill and still fits the others', () => {
    const inputs = [skill('good', 1, -0.02), { id: 'broken', months: ['2024-01'], external: { n: [7], N: [3] } }]
    const result = fitAll(inputs, DEFAULT_CURVES_CONFIG)
    expect(result.curves.map((curve) => curve.id)).toEqual(['good'])
    expect(result.failures).toEqual([{ id: 'broken', error: expect.stringMatching(/skill "broken": external.n \(7\) exceeds external.N \(3\)/) }])
  })

  it('ends every skill’s window at the run’s latest month, so a silent skill reads as zero demand', () => {
    // a skill whose documents stop being counted two months early: its window still ends with the
    // others, and the missing months are missing (no documents), not zeros
    const late = skill('late', 6, 0)
    const early = { ...skill('early', 7, 0), months: MONTHS.slice(0, 34) }
    early.external = { n: early.external.n.slice(0, 34), N: early.external.N.slice(0, 34) }
    const result = fitAll([late, early], DEFAULT_CURVES_CONFIG)
    const earlyCurve = result.curves.find((curve) => curve.id === 'early')!
    expect((earlyCurve.details['combined'] as { months: string[] }).months.at(-1)).toBe('2025-12')
    expect(earlyCurve.latestMonth).toBe('2025-10')
  })

  it('handles an empty run', () => {
    expect(fitAll([], DEFAULT_CURVES_CONFIG)).toEqual({ curves: [], failures: [], tested: 0 })
  })
})
