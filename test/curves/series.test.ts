import { describe, it, expect } from 'vitest'
import { buildGrid, gridMonths, SeriesInputError } from '../../src/curves/series.ts'
import { monthIndex, monthLabel, monthOfYear } from '../../src/curves/months.ts'

const OPTIONS = { weights: { external: 0.7, internal: 0.3 }, windowMonths: 60, minMonths: 3 }

describe('months', () => {
  it('round-trips YYYY-MM and rejects other forms', () => {
    expect(monthLabel(monthIndex('2024-03'))).toBe('2024-03')
    expect(monthIndex('2024-01') - monthIndex('2023-12')).toBe(1)
    expect(monthOfYear(monthIndex('2024-12'))).toBe(11)
    for (const bad of ['2024-13', '2024-3', '24-03', '2024-00', '2024/03', '']) expect(() => monthIndex(bad)).toThrow(/YYYY-MM/)
  })
})

describe('buildGrid', () => {
  it('fills a contiguous grid; months without documents are missing, not zero', () => {
    const grid = buildGrid({ id: 'sql', months: ['2024-01', '2024-04', '2024-02'], external: { n: [3, 5, 4], N: [100, 100, 100] } }, OPTIONS)
    expect(grid.length).toBe(4)
    expect(gridMonths(grid)).toEqual(['2024-01', '2024-02', '2024-03', '2024-04'])
    expect(Array.from(grid.combined.slice(0, 2))).toEqual([0.03, 0.04])
    expect(Number.isNaN(grid.combined[2]!)).toBe(true)
    expect(grid.sources[0]!.observedMonths).toBe(3)
    // an explicit N = 0 month is missing too
    const explicit = buildGrid({ id: 'sql', months: ['2024-01', '2024-02', '2024-03', '2024-04'], external: { n: [3, 4, 0, 5], N: [100, 100, 0, 100] } }, OPTIONS)
    expect(Number.isNaN(explicit.combined[2]!)).toBe(true)
  })

  it('indexes each source to its own level before weighting (weights weigh movements, not levels)', () => {
    // internal shares are a fifth of external; both rise 10% in the second month
    const grid = buildGrid(
      {
        id: 'k8s',
        months: ['2024-01', '2024-02', '2024-03'],
        external: { n: [100, 110, 100], N: [1000, 1000, 1000] },
        internal: { n: [20, 22, 20], N: [1000, 1000, 1000] },
      },
      OPTIONS,
    )
    const externalLevel = 310 / 3000
    const internalLevel = 62 / 3000
    expect(grid.combinedLevel).toBeCloseTo(0.7 * externalLevel + 0.3 * internalLevel, 12)
    // I(t) = S̄ Σ w s(t)/s̄: both sources at +10% relative to their level in month 2
    expect(grid.combined[1]! / grid.combined[0]!).toBeCloseTo(1.1, 12)
    const expected = grid.combinedLevel * (0.7 * (0.1 / externalLevel) + 0.3 * (0.02 / internalLevel))
    expect(grid.combined[0]).toBeCloseTo(expected, 12)
    // the information-weighted index: observed over expected mentions
    expect(grid.pooled[0]).toBeCloseTo((grid.combinedLevel * 120) / (1000 * externalLevel + 1000 * internalLevel), 12)
  })

  it('drops a source with too few months or no mentions and renormalises the weights', () => {
    const grid = buildGrid(
      {
        id: 'rust',
        months: ['2024-01', '2024-02', '2024-03', '2024-04'],
        external: { n: [1, 2, 3, 4], N: [100, 100, 100, 100] },
        internal: { n: [0, 0, 0, 0], N: [50, 50, 50, 50] },
      },
      OPTIONS,
    )
    expect(grid.sources.map((s) => s.name)).toEqual(['external'])
    expect(grid.sources[0]!.weight).toBe(1)
    expect(grid.dropped).toEqual([{ name: 'internal', reason: 'no mentions in the window' }])
    expect(grid.combined[3]).toBeCloseTo(0.04, 12)
  })

  it('keeps only the latest window of months', () => {
    const months = Array.from({ length: 30 }, (_, i) => monthLabel(monthIndex('2022-01') + i))
    const grid = buildGrid({ id: 'x', months, external: { n: months.map(() => 5), N: months.map(() => 100) } }, { ...OPTIONS, windowMonths: 12 })
    expect(grid.length).toBe(12)
    expect(gridMonths(grid)[0]).toBe(months[18])
  })

  it('names the skill, month and field of bad input', () => {
    const base = { id: 'perl', months: ['2024-01', '2024-02'] }
    expect(() => buildGrid({ ...base, months: ['2024-01', '2024-1'], external: { n: [1, 1], N: [9, 9] } }, OPTIONS)).toThrow(/skill "perl": months\[1\] must be YYYY-MM/)
    expect(() => buildGrid({ ...base, months: ['2024-01', '2024-01'], external: { n: [1, 1], N: [9, 9] } }, OPTIONS)).toThrow(/month 2024-01 appears twice/)
    expect(() => buildGrid({ ...base, external: { n: [1, 2, 3], N: [9, 9] } }, OPTIONS)).toThrow(/external.n and external.N need one value per month/)
    expect(() => buildGrid({ ...base, external: { n: [1, 10], N: [9, 9] } }, OPTIONS)).toThrow(/external.n \(10\) exceeds external.N \(9\) for 2024-02/)
    expect(() => buildGrid({ ...base, internal: { n: [1.5, 1], N: [9, 9] } }, OPTIONS)).toThrow(/internal.n for 2024-01 must be a whole number/)
    expect(() => buildGrid({ ...base, external: { n: [1, 1], N: [-9, 9] } }, OPTIONS)).toThrow(/external.N for 2024-01/)
    expect(() => buildGrid({ ...base, external: { n: [1, 1], N: [9, 9] } }, OPTIONS)).not.toThrow(SeriesInputError)
  })
})
