/**
 * Ability benchmarks (issue 6): EAP for 100,000 people × 30 items (goal < 5 s on one core) and
 * Bock–Aitkin calibration of 60 items × 5,000 people (goal < 30 s), plus MLE and coverage figures
 * for context. Simulated 2PL data from a seeded generator; the figures include the recovery error so
 * that a fast but wrong run shows. Standalone: `npx tsx bench/ability.ts`.
 */
import { makeItem } from '../src/ability/response-function.ts'
import { eapBatch } from '../src/ability/eap.ts'
import { estimateAbilities } from '../src/ability/estimate.ts'
import { calibrate } from '../src/ability/calibrate.ts'
import { summariseCoverage, type PersonRequirement } from '../src/ability/coverage.ts'
import { mulberry32, normalDraw, simulateResponses } from '../src/ability/simulate.ts'
import { reportBench, type Figure } from './report.ts'

/** Wall-clock seconds of fn; its CPU seconds (user + system, this process) go to lastCpu. */
let lastCpu = 0
function seconds(fn: () => void): number {
  const cpu0 = process.cpuUsage()
  const t0 = performance.now()
  fn()
  const cpu = process.cpuUsage(cpu0)
  lastCpu = (cpu.user + cpu.system) / 1e6
  return (performance.now() - t0) / 1000
}

const figures: Figure[] = []
const rng = mulberry32(20240601)

// ---- EAP: 100,000 people × 30 items
{
  const items = Array.from({ length: 30 }, () => makeItem('2pl', { a: 0.7 + 1.3 * rng(), b: normalDraw(rng) }))
  const thetas = Float64Array.from({ length: 100_000 }, () => normalDraw(rng))
  const matrix = simulateResponses(thetas, items, rng)
  let theta: Float64Array = new Float64Array(0)
  const eapSeconds = seconds(() => {
    theta = eapBatch(items, matrix).theta
  })
  let squared = 0
  for (let p = 0; p < thetas.length; p++) squared += (theta[p] - thetas[p]) ** 2
  figures.push({ figure: 'EAP 100,000 people x 30 items (61 points)', value: eapSeconds, unit: 's', goal: '< 5 s', met: eapSeconds < 5 })
  figures.push({ figure: '  of which CPU time', value: lastCpu, unit: 's' })
  figures.push({ figure: 'EAP throughput', value: (thetas.length * items.length) / eapSeconds, unit: 'people x items/s' })
  figures.push({ figure: 'EAP RMSE vs true theta', value: Math.sqrt(squared / thetas.length), unit: '' })
  const subset = { ...matrix, nPersons: 20_000, start: matrix.start.subarray(0, 20_001) }
  const mleSeconds = seconds(() => void estimateAbilities(items, subset, { method: 'mle' }))
  figures.push({ figure: 'MLE (with EAP fallback) 20,000 people x 30 items', value: mleSeconds, unit: 's' })
  figures.push({ figure: 'MLE throughput', value: (20_000 * items.length) / mleSeconds, unit: 'people x items/s' })
}

// ---- calibration: 60 items × 5,000 people
{
  const truth = Array.from({ length: 60 }, () => makeItem('2pl', { a: 0.6 + 1.4 * rng(), b: Math.max(-2.5, Math.min(2.5, normalDraw(rng))) }))
  const thetas = Float64Array.from({ length: 5000 }, () => normalDraw(rng))
  const matrix = simulateResponses(thetas, truth, rng)
  let result = calibrate(matrix, { model: '2pl', diagnostics: false, maxCycles: 1 })
  const twoPlSeconds = seconds(() => {
    result = calibrate(matrix, { model: '2pl' })
  })
  const rmse = (key: 'a' | 'b') => Math.sqrt(result.items.reduce((s, item, j) => s + (item.params![key] - truth[j][key]) ** 2, 0) / truth.length)
  figures.push({ figure: 'calibration 2PL 60 items x 5,000 people (with SEs, fit)', value: twoPlSeconds, unit: 's', goal: '< 30 s', met: twoPlSeconds < 30 })
  figures.push({ figure: '  of which CPU time', value: lastCpu, unit: 's' })
  figures.push({ figure: 'calibration 2PL throughput', value: (5000 * truth.length) / twoPlSeconds, unit: 'people x items/s' })
  figures.push({ figure: '2PL EM cycles', value: result.cycles, unit: '' })
  figures.push({ figure: '2PL recovery RMSE b', value: rmse('b'), unit: '', goal: '<= 0.15', met: rmse('b') <= 0.15 })
  figures.push({ figure: '2PL recovery RMSE a', value: rmse('a'), unit: '', goal: '<= 0.2', met: rmse('a') <= 0.2 })
  const raschSeconds = seconds(() => {
    result = calibrate(matrix, { model: 'rasch' })
  })
  figures.push({ figure: 'calibration Rasch 60 items x 5,000 people', value: raschSeconds, unit: 's', goal: '< 30 s', met: raschSeconds < 30 })
  figures.push({ figure: '  of which CPU time', value: lastCpu, unit: 's' })
}

// ---- coverage: 100,000 people against one requirement, in groups of 250
{
  const rows: PersonRequirement[] = Array.from({ length: 100_000 }, (_, i) => ({
    personId: String(i),
    requiredTheta: 0.5,
    ability: i % 10 === 0 ? null : { theta: normalDraw(rng), se: 0.2 + 0.4 * rng() },
  }))
  const coverageSeconds = seconds(() => {
    for (let g = 0; g < rows.length; g += 250) summariseCoverage(rows.slice(g, g + 250))
    summariseCoverage(rows) // one large group: normal approximation path
  })
  figures.push({ figure: 'coverage 100,000 people (400 groups + total)', value: coverageSeconds, unit: 's' })
}

reportBench('ability', figures)
