import { describe, it, expect } from 'vitest'
import { burstsFromStates, kleinbergBursts } from '../../src/stats/kleinberg-bursts.ts'

// Reference fixture: repository hitsujiwool/node-kleinberg-burst, test/index.js, "reference data from
// the R bursts package" (CHECKS.md §6 [S]): 71 offsets, expected level per occurrence with a leading 0
function fixtureOffsets(): number[] {
  const offsets = [0, 100, 200, 300, 400, 410]
  for (let v = 415; v <= 450; v += 5) offsets.push(v)
  for (let v = 451; v <= 469; v += 2) offsets.push(v)
  offsets.push(480)
  for (let v = 485; v <= 600; v += 5) offsets.push(v)
  offsets.push(700, 710) // no 705
  for (let v = 715; v <= 800; v += 5) offsets.push(v)
  offsets.push(900, 1000)
  return offsets
}

const levelString = (states: number[]): string => '0' + states.join('')

describe('kleinbergBursts', () => {
  const offsets = fixtureOffsets()

  it('builds the 71-offset fixture', () => {
    expect(offsets).toHaveLength(71)
  })

  it('s = 2, γ = 1 matches the R bursts reference exactly', () => {
    const result = kleinbergBursts(offsets, { s: 2, gamma: 1 })
    expect(levelString(result.states)).toBe('00000011111111222222222211111111111111111111111110011111111111111111100')
    // R's output lists (level, start, end) with level 1 the whole stream: (2, 410, 600), (3, 450, 469),
    // (2, 710, 800) [C in CHECKS.md]; our levels start at 1 for the first level above the base rate
    expect(result.bursts).toEqual([
      { level: 1, start: 410, end: 600 },
      { level: 2, start: 450, end: 469 },
      { level: 1, start: 710, end: 800 },
    ])
  })

  it('s = 3, γ = 1: level 1 from index 6 to 48 and 51 to 68, otherwise 0', () => {
    const levels = levelString(kleinbergBursts(offsets, { s: 3, gamma: 1 }).states)
    const expected = Array.from({ length: 71 }, (_, i) => ((i >= 6 && i <= 48) || (i >= 51 && i <= 68) ? '1' : '0')).join('')
    expect(levels).toBe(expected)
  })

  it('s = 2, γ = 3: level 1 from index 6 to 48 only', () => {
    const levels = levelString(kleinbergBursts(offsets, { s: 2, gamma: 3 }).states)
    const expected = Array.from({ length: 71 }, (_, i) => (i >= 6 && i <= 48 ? '1' : '0')).join('')
    expect(levels).toBe(expected)
  })

  it('reproduces the pybursts page example, s = 2, γ = 0.1 (CHECKS.md §6, values [C] only)', () => {
    const result = kleinbergBursts([4, 17, 23, 27, 33, 35, 37, 76, 77, 82, 84, 88, 90, 92], { s: 2, gamma: 0.1 })
    // R format (1, 4, 92), (2, 33, 37), (2, 76, 92), (3, 76, 77) → our levels one lower, base omitted
    expect(result.bursts).toEqual([
      { level: 1, start: 33, end: 37 },
      { level: 1, start: 76, end: 92 },
      { level: 2, start: 76, end: 77 },
    ])
  })

  it('splits states into nested maximal runs', () => {
    expect(burstsFromStates([0, 1, 2, 1, 0], [0, 10, 12, 13, 15, 40])).toEqual([
      { level: 1, start: 10, end: 15 },
      { level: 2, start: 12, end: 13 },
    ])
    expect(burstsFromStates([0, 0], [0, 1, 2])).toEqual([])
  })

  it('rejects bad input', () => {
    expect(() => kleinbergBursts([5])).toThrow(/at least two events/)
    expect(() => kleinbergBursts([1, 2, 2, 3])).toThrow(/strictly increasing times, position 2/)
    expect(() => kleinbergBursts([1, 2, 3], { s: 1 })).toThrow(/s > 1/)
    expect(() => kleinbergBursts([1, 2, 3], { gamma: 0 })).toThrow(/gamma > 0/)
  })
})
