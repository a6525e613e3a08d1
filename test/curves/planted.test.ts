import { describe, it, expect } from 'vitest'
import { fitAll } from '../../src/curves/fit-all.ts'
import { DEFAULT_CURVES_CONFIG } from '../../src/curves/config.ts'
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'
import { plantedInputs } from './simulate.ts'

// The demo plants these shapes (src/demo/planted.ts, shares from src/demo/skills.ts shareAt) in about
// 2,000 postings and 400 requests a month for 36 months; the curves must find them again.
describe('planted demo shapes', () => {
  it.each([2, 3, 5, 6])('recovers every planted state (seed %i)', (seed) => {
    const items = plantedInputs(seed, 36)
    const result = fitAll(items.map((item) => item.input), DEFAULT_CURVES_CONFIG)
    const wrong = result.curves.filter((curve, i) => curve.state !== items[i]!.expected).map((curve) => `${curve.id}: ${curve.state}`)
    expect(wrong).toEqual([])
  })

  it('recovers at least 97% of planted states over 20 seeds, declines with half-lives in range', () => {
    let right = 0
    let total = 0
    let halfLivesInRange = 0
    let halfLives = 0
    for (let seed = 1; seed <= 20; seed++) {
      const items = plantedInputs(seed, 36)
      const result = fitAll(items.map((item) => item.input), DEFAULT_CURVES_CONFIG)
      result.curves.forEach((curve, i) => {
        total++
        if (curve.state === items[i]!.expected) right++
        const shape = PLANTED_SKILLS[i]!.shape
        if (shape.kind === 'declining' && curve.halfLifeMonths !== null) {
          halfLives++
          const truth = 12 * shape.halfLifeYears
          if (curve.halfLifeInterval![0] <= truth && (curve.halfLifeInterval![1] === null || truth <= curve.halfLifeInterval![1])) halfLivesInRange++
        }
      })
    }
    expect(right / total).toBeGreaterThanOrEqual(0.97)
    expect(halfLivesInRange / halfLives).toBeGreaterThanOrEqual(0.9)
  })
})
