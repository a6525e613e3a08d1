import { describe, it, expect } from 'vitest'
import { poissonScoreTest } from '../../src/stats/score-test.ts'
import { poissonGlm } from '../../src/stats/poisson-glm.ts'
import { seededRandom } from './seeded-random.ts'

function columns(values: number[][]): Float64Array {
  const rows = values[0]!.length
  const out = new Float64Array(rows * values.length)
  values.forEach((column, j) => column.forEach((v, i) => (out[j * rows + i] = v)))
  return out
}

describe('poissonScoreTest', () => {
  it('equals Pearson X² of the two-group table for a group term added to a common rate', () => {
    // closed form (hand-checked): S = (O₁ − E₁)²/E₁ + (O₂ − E₂)²/E₂ with E_g = exposure_g · Σy/Σexposure
    const counts = [12, 7, 30, 26]
    const exposure = [1000, 800, 1500, 1400]
    const offset = exposure.map(Math.log)
    const design = columns([[1, 1, 1, 1]])
    const fit = poissonGlm({ design, rows: 4, cols: 1, counts, offset })
    const result = poissonScoreTest({ design, rows: 4, cols: 1, fitted: fit.fitted, counts, extra: columns([[0, 0, 1, 1]]), extraCols: 1 })
    const rate = 75 / 4700
    const e1 = 1800 * rate
    const e2 = 2900 * rate
    const pearson = (19 - e1) ** 2 / e1 + (56 - e2) ** 2 / e2
    expect(result.statistic).toBeCloseTo(pearson, 10)
    expect(result.degreesOfFreedom).toBe(1)
  })

  it('approximates the likelihood-ratio statistic for small added effects', () => {
    const random = seededRandom(4)
    const months = Array.from({ length: 48 }, (_, i) => i)
    const totals = months.map(() => 2000)
    const sin = months.map((m) => Math.sin((2 * Math.PI * m) / 12))
    const cos = months.map((m) => Math.cos((2 * Math.PI * m) / 12))
    const counts = months.map((m, i) => random.poisson(totals[i]! * 0.03 * Math.exp(-0.005 * m + 0.05 * sin[i]!)))
    const offset = totals.map(Math.log)
    const base = columns([months.map(() => 1), months])
    const small = poissonGlm({ design: base, rows: 48, cols: 2, counts, offset })
    const large = poissonGlm({ design: columns([months.map(() => 1), months, sin, cos]), rows: 48, cols: 4, counts, offset })
    const score = poissonScoreTest({ design: base, rows: 48, cols: 2, fitted: small.fitted, counts, extra: columns([sin, cos]), extraCols: 2 })
    const likelihoodRatio = small.deviance - large.deviance
    expect(Math.abs(score.statistic - likelihoodRatio) / likelihoodRatio).toBeLessThan(0.05)
    expect(score.degreesOfFreedom).toBe(2)
  })

  it('is about χ²-distributed under the smaller model (rejection rate near 5%)', () => {
    const random = seededRandom(12)
    const months = Array.from({ length: 36 }, (_, i) => i)
    const base = columns([months.map(() => 1), months])
    const extra = columns([months.map((m) => Math.sin((2 * Math.PI * m) / 12)), months.map((m) => Math.cos((2 * Math.PI * m) / 12))])
    let rejected = 0
    for (let r = 0; r < 400; r++) {
      const counts = months.map(() => random.poisson(80))
      const fit = poissonGlm({ design: base, rows: 36, cols: 2, counts })
      if (poissonScoreTest({ design: base, rows: 36, cols: 2, fitted: fit.fitted, counts, extra, extraCols: 2 }).pValue < 0.05) rejected++
    }
    expect(rejected / 400).toBeGreaterThan(0.025)
    expect(rejected / 400).toBeLessThan(0.08)
  })

  it('rejects malformed designs', () => {
    expect(() => poissonScoreTest({ design: new Float64Array(3), rows: 2, cols: 2, fitted: [1, 1], counts: [1, 1], extra: new Float64Array(2), extraCols: 1 })).toThrow(/rows × columns/)
  })
})
