/**
 * The floor of the fit's analysis: on a kept pipeline database (`BENCH_KEEP=1`), the cost per tested
 * skill of the parts no state or forecast can do without (the series grid, the linear trend GLM,
 * Mann–Kendall, Holt's fit), each alone over every tested skill, beside the whole analysis. It shows
 * how far speeding up the analysis can go before methods would have to be dropped (DEVELOPERS.md,
 * "Scale", sixteenth session). Warm: the third of three passes is reported.
 * Not in the default `npm run bench` list; run `npm run bench -- fit-floor`, with the database in
 * env BENCH_FLOOR_DB (default: the kept 1M pipeline database).
 */
import fs from 'node:fs'
import path from 'node:path'
import Database from 'better-sqlite3'
import { DEFAULT_CURVES_CONFIG as config } from '../src/curves/config.ts'
import { fitAll } from '../src/curves/fit-all.ts'
import { analyseSkill } from '../src/curves/fit-skill.ts'
import { buildGrid } from '../src/curves/series.ts'
import type { SkillGrid, SkillSeriesInput } from '../src/curves/series.ts'
import { demandInputs } from '../src/curves/stage.ts'
import { fitTrend, stackObservations } from '../src/curves/trend-model.ts'
import type { Db } from '../src/db/connection.ts'
import { fitDampedHolt } from '../src/stats/damped-holt-fit.ts'
import { mannKendall } from '../src/stats/mann-kendall.ts'
import { WORK_DIR } from './corpus.ts'
import { reportBench, type Figure } from './report.ts'

const file = process.env['BENCH_FLOOR_DB'] ?? path.join(WORK_DIR, 'pipeline-1000000', 'tides.db')
if (!fs.existsSync(file)) {
  process.stderr.write(`fit-floor: no database at ${file}: run \`BENCH_KEEP=1 BENCH_N=1000000 npm run bench -- pipeline\` first, or set BENCH_FLOOR_DB\n`)
  process.exit(2)
}
const db = new Database(file, { readonly: true })
const inputs: SkillSeriesInput[] = demandInputs(db as unknown as Db).inputs
db.close()

const gridOf = (input: SkillSeriesInput): SkillGrid => buildGrid(input, { weights: config.weights, windowMonths: config.windowMonths, minMonths: config.minMonths })
const grids = inputs.map(gridOf)
// the skills the fit tests (a p-value in the cross-skill family), as the stage counts them
const testedIds = new Set(fitAll(inputs, config).curves.filter((curve) => curve.pValue !== null && Number.isFinite(curve.pValue)).map((curve) => curve.id))
const tested = inputs.flatMap((input, k) => (testedIds.has(input.id) ? [k] : []))

/** µs per tested skill, the third of three passes */
function perSkill(part: (k: number) => void): number {
  let ms = 0
  for (let pass = 0; pass < 3; pass++) {
    const started = performance.now()
    for (const k of tested) part(k)
    ms = performance.now() - started
  }
  return (ms * 1000) / tested.length
}

const parts: [string, (k: number) => void][] = [
  ['the series grid', (k) => gridOf(inputs[k]!)],
  ['stacking and the linear trend GLM', (k) => fitTrend(stackObservations(grids[k]!), { harmonics: 0, breakpoint: null })],
  ['Mann–Kendall of the pooled index', (k) => {
    const grid = grids[k]!
    const positions: number[] = []
    for (let t = 0; t < grid.length; t++) if (!Number.isNaN(grid.pooled[t]!)) positions.push(t)
    mannKendall(positions.map((t) => grid.pooled[t]!), positions)
  }],
  ["Holt's damped-trend fit", (k) => {
    try {
      fitDampedHolt(grids[k]!.combined)
    } catch {
      // too few months for Holt: the analysis skips it too
    }
  }],
]
const figures: Figure[] = [{ figure: `skills tested of ${inputs.length}`, value: tested.length, unit: 'skills' }]
let floor = 0
for (const [name, part] of parts) {
  const us = perSkill(part)
  floor += us
  figures.push({ figure: name, value: us, unit: 'µs a tested skill' })
}
figures.push({ figure: 'the floor (the parts above)', value: floor, unit: 'µs a tested skill' })
const whole = perSkill((k) => analyseSkill(inputs[k]!, config))
figures.push({ figure: 'the whole analysis', value: whole, unit: 'µs a tested skill' })
figures.push({ figure: 'floor / whole', value: floor / whole, unit: 'ratio' })
reportBench('fit-floor', figures)
