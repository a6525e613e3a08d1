import { describe, expect, it } from 'vitest'
import fc from 'fast-check'
import { DEFAULT_CURVES_CONFIG } from '../../src/curves/config.ts'
import { fitAll } from '../../src/curves/fit-all.ts'
import { FitThreads, fitToRows, fullAnalyses } from '../../src/curves/fit-threads.ts'
import { fittedRows } from '../../src/curves/rows.ts'
import type { SkillSeriesInput } from '../../src/curves/series.ts'
import { seededRandom } from '../stats/seeded-random.ts'
import { drawCounts, monthRange } from './simulate.ts'

const MONTHS = monthRange('2021-01', 48)
const AT = '2025-01-01T00:00:00.000Z'

/** A run of skills of every kind: rising, falling, flat, thin (insufficient), emerging, silent, malformed. */
function run(seed: number, count: number, firstId = 's'): SkillSeriesInput[] {
  const random = seededRandom(seed)
  const N = MONTHS.map(() => 3000)
  const inputs: SkillSeriesInput[] = []
  for (let i = 0; i < count; i++) {
    const kind = i % 7
    const id = `${firstId}${String(i).padStart(3, '0')}`
    if (kind === 6) {
      inputs.push({ id, months: ['2024-01'], external: { n: [9], N: [3] } })
      continue
    }
    const base = kind === 3 ? 0.0004 : 0.01 + 0.03 * random.uniform()
    const slope = kind === 0 ? 0.03 : kind === 1 ? -0.04 : kind === 4 ? 0 : (random.uniform() - 0.5) * 0.02
    const shares = MONTHS.map((_, t) => (kind === 5 ? (t < 30 ? 0 : 0.02) : base * Math.exp(slope * t)))
    inputs.push({ id, months: MONTHS, external: { n: drawCounts(random, N, shares), N } })
  }
  return inputs
}

/** Details as text: a worker's rows arrive as Uint8Array, this thread's as Buffer (the same bytes). */
function asText<T extends { rows: { details_json: string | Uint8Array }[] }>(result: T): T {
  return { ...result, rows: result.rows.map((row) => ({ ...row, details_json: Buffer.from(row.details_json).toString('utf8') })) }
}

function sequential(inputs: SkillSeriesInput[], previous: Map<string, string>) {
  const result = fitAll(inputs, DEFAULT_CURVES_CONFIG, previous)
  return asText({ ...fittedRows(result.curves, previous, AT), failures: result.failures, tested: result.tested })
}

describe('fitToRows on worker threads', () => {
  it('gives the rows, events, failures and BH family of the fit on one thread', async () => {
    const inputs = run(11, 60)
    const previous = new Map(inputs.slice(0, 20).map((input, i) => [input.id, i % 2 ? 'steady' : 'rising']))
    const expected = sequential(inputs, previous)
    const threaded = await fitToRows(inputs, DEFAULT_CURVES_CONFIG, previous, AT, { threads: 2, minSkills: 0, chunk: 4, workersFirst: true })
    expect(threaded.threads).toBe(2)
    const { threads: _threads, ...rest } = threaded
    expect(asText(rest)).toEqual(expected)
    // the run holds every case: failures, state changes and insufficient evidence
    expect(expected.failures.length).toBeGreaterThan(0)
    expect(expected.events.filter(Boolean).length).toBeGreaterThan(0)
    expect(expected.states['insufficient-evidence']).toBeGreaterThan(0)
  }, 60_000)

  it('agrees with one thread for any chunk size and thread count (property, seeded)', async () => {
    const inputs = run(5, 24)
    const expected = sequential(inputs, new Map())
    await fc.assert(
      fc.asyncProperty(fc.integer({ min: 1, max: 30 }), fc.integer({ min: 2, max: 3 }), async (chunk, threads) => {
        const { threads: used, ...rest } = await fitToRows(inputs, DEFAULT_CURVES_CONFIG, new Map(), AT, { threads, minSkills: 0, chunk, workersFirst: true })
        expect(asText(rest)).toEqual(expected)
        expect(used).toBeGreaterThanOrEqual(2)
      }),
      { numRuns: 4, seed: 20261202 },
    )
  }, 120_000)

  it('stays on this thread when too few skills can be analysed fully', async () => {
    const inputs = run(3, 14)
    expect(fullAnalyses(inputs, DEFAULT_CURVES_CONFIG)).toBeLessThan(14)
    const result = await fitToRows(inputs, DEFAULT_CURVES_CONFIG, new Map(), AT, { threads: 2, minSkills: 1000 })
    expect(result.threads).toBe(1)
    expect(result.rows).toHaveLength(sequential(inputs, new Map()).rows.length)
  })

  it('counts as fully analysable only skills with enough mentions in all', () => {
    const at = (n: number[]) => ({ id: 'x', months: MONTHS.slice(0, n.length), external: { n, N: n.map(() => 100) } })
    const min = DEFAULT_CURVES_CONFIG.minMentions
    expect(fullAnalyses([at([min - 1, 0]), at([min, 0]), { ...at([0]), internal: { n: [min], N: [100] } }], DEFAULT_CURVES_CONFIG)).toBe(2)
  })

  for (const mode of ['fail-start', 'fail-finish']) {
    it(`fits a failed worker's skills on the stage's thread, the same, and says so (${mode})`, async () => {
      const inputs = run(22, 40)
      const expected = sequential(inputs, new Map())
      const logs: string[] = []
      const workerModule = new URL(mode === 'fail-start' ? './fixtures/fit-worker-failing-at-start.ts' : './fixtures/fit-worker-dying-in-second-half.ts', import.meta.url)
      // the worker that fails at start never begins to claim: this thread does not wait for it
      const workersFirst = mode === 'fail-finish'
      const pool = FitThreads.start(2, workerModule)
      const { threads: used, ...rest } = await fitToRows(inputs, DEFAULT_CURVES_CONFIG, new Map(), AT, { pool, minSkills: 0, chunk: 2, workersFirst, log: (m) => logs.push(m) }).finally(() => pool.stop())
      expect(asText(rest)).toEqual(expected)
      if (workersFirst) {
        expect(logs).toEqual([expect.stringMatching(/^fit: a worker thread failed \(stopped with exit code 3\); its skills are fitted on the stage's thread$/)])
        expect(used).toBe(2)
      }
      for (const line of logs) expect(line).toMatch(/^fit: a worker thread failed \(.+\); its skills are fitted on the stage's thread$/)
    }, 60_000)
  }
})
