/**
 * @module curves/stage
 * The fit stage: builds every skill's monthly demand series from the demand aggregates the map stage
 * keeps (so its cost does not grow with the number of documents), fits the demand curves (trend,
 * half-life, significance across skills, change, emergence, forecast and lifecycle state), and in
 * one transaction replaces `curves` and emits `curves.fitted` plus one `skill.state-changed` per skill
 * whose state moved. Runs after `documents.mapped`. (The dashboard charts the same aggregates.)
 */
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { countDecidedCurves, readCurveStates, readMonthlyDemand, rebuildDemandCounts, replaceCurves } from '../db/curves.ts'
import type { MonthlyDemand } from '../db/curves.ts'
import { emit } from '../events/outbox.ts'
import type { Stage, StageContext, StageResult } from '../stage.ts'
import { defaultThreads } from '../util/worker.ts'
import { FitThreads, fitToRows, MIN_SKILLS_FOR_THREADS } from './fit-threads.ts'
import { isMonth } from './months.ts'
import type { SkillSeriesInput } from './series.ts'
import type { SkillState } from './state.ts'

/**
 * One series input per concept of the taxonomy, on the run's months (a month with no documents of
 * a kind has N = 0 there: missing for that series, not zero demand).
 *
 * @example
 * ```ts
 * seriesInputs(readMonthlyDemand(db))[0] // => { id, label, months, external: { n, N }, internal?: { n, N } }
 * ```
 */
export function seriesInputs(demand: MonthlyDemand): SkillSeriesInput[] {
  const { totals } = demand
  const months = validMonths(demand)
  const totalArrays = {
    external: months.map((month) => totals.external.get(month) ?? 0),
    internal: months.map((month) => totals.internal.get(month) ?? 0),
  }
  const hasInternal = totalArrays.internal.some((total) => total > 0)
  const hasExternal = totalArrays.external.some((total) => total > 0)
  const inputs: SkillSeriesInput[] = []
  for (const [id, label] of demand.labels) {
    const counts = demand.mentions.get(id)
    const input: SkillSeriesInput = { id, label, months }
    if (hasExternal) input.external = { n: months.map((month) => counts?.external.get(month) ?? 0), N: totalArrays.external }
    if (hasInternal) input.internal = { n: months.map((month) => counts?.internal.get(month) ?? 0), N: totalArrays.internal }
    inputs.push(input)
  }
  return inputs
}

/** The run's months that are well-formed YYYY-MM (documents with another month value are left out). */
function validMonths(demand: MonthlyDemand): string[] {
  return demand.months.filter((month) => isMonth(month))
}


export interface FitRunOptions {
  /** repair first: recompute the demand aggregates from documents and mentions (`tides run fit --rebuild`) */
  rebuild?: boolean
  /** the moment recorded as fitted_at (default: now) */
  now?: Date
  /** threads for the fit, this one included (default: one per core; used only for a large run, see fit-threads.ts) */
  threads?: number
  /** fewest fully analysed skills before worker threads are started (default: fit-threads.ts) */
  minSkillsForThreads?: number
  log?: (message: string) => void
}

/**
 * Run the fit stage on a database. Exported for tests and the CLI; the pipeline calls it through
 * {@link fitStage}.
 *
 * A skill enters `skill.state-changed` when its state differs from the stored one; a skill fitted
 * for the first time only when it is flagged (emerging, rising, declining, fading), so that a first
 * run does not announce thousands of steady skills (rows.ts `announced`).
 */
export async function runFit(db: Db, config: Config, options: FitRunOptions = {}): Promise<StageResult> {
  const log = options.log ?? (() => {})
  const started = performance.now()
  const threads = options.threads ?? defaultThreads()
  const minSkills = options.minSkillsForThreads ?? MIN_SKILLS_FOR_THREADS
  // when the last fit was large, the workers start now and load while the inputs are read
  const pool = threads > 1 && countDecidedCurves(db) >= minSkills ? FitThreads.start(threads) : undefined
  try {
    return await fitAndStore(db, config, options, { started, threads, minSkills, pool, log })
  } finally {
    await pool?.stop()
  }
}

async function fitAndStore(
  db: Db,
  config: Config,
  options: FitRunOptions,
  run: { started: number; threads: number; minSkills: number; pool: FitThreads | undefined; log: (message: string) => void },
): Promise<StageResult> {
  const { started, log } = run
  if (options.rebuild) log(`fit: demand aggregates rebuilt from documents and mentions (${rebuildDemandCounts(db)} rows)`)
  const demand = readMonthlyDemand(db)
  const readMs = performance.now() - started
  const months = validMonths(demand)
  const badMonths = demand.months.filter((month) => !isMonth(month))
  if (badMonths.length) log(`fit: left out documents whose month is not YYYY-MM: ${badMonths.slice(0, 5).map((m) => JSON.stringify(m)).join(', ')}${badMonths.length > 5 ? ', …' : ''}`)
  const inputs = seriesInputs(demand)
  log(`fit: ${inputs.length} skills over ${months.length} months (${months[0] ?? '-'} to ${months.at(-1) ?? '-'})`)
  const previous = readCurveStates(db)
  const fittedAt = (options.now ?? new Date()).toISOString()
  const fitStarted = performance.now()
  const result = await fitToRows(inputs, config.curves, previous, fittedAt, { threads: run.threads, pool: run.pool, minSkills: run.minSkills, log })
  const fitMs = performance.now() - fitStarted
  if (result.threads > 1) log(`fit: ${result.threads} threads`)
  for (const failure of result.failures) log(`fit: skill ${failure.id} skipped: ${failure.error}`)
  const { states } = result
  let changed = 0
  const writeStarted = performance.now()
  db.transaction(() => {
    replaceCurves(db, result.rows)
    for (const event of result.events) {
      if (!event) continue
      emit(db, 'skill.state-changed', event)
      changed++
    }
    emit(db, 'curves.fitted', {
      skills: result.rows.length,
      tested: result.tested,
      failures: result.failures.length,
      states,
      stateChanges: changed,
      months: months.length,
      latestMonth: months.at(-1) ?? null,
      q: config.curves.q,
    })
  })()
  const writeMs = performance.now() - writeStarted
  const seconds = (performance.now() - started) / 1000
  const summary =
    `fitted ${result.rows.length} skills in ${seconds.toFixed(1)} s: ` +
    (['emerging', 'rising', 'steady', 'declining', 'fading', 'insufficient-evidence'] as SkillState[]).map((state) => `${states[state] ?? 0} ${state}`).join(', ') +
    `; ${changed} state change${changed === 1 ? '' : 's'}` +
    (result.failures.length ? `; ${result.failures.length} skipped (bad input)` : '')
  return {
    summary,
    counts: { skills: result.rows.length, tested: result.tested, stateChanges: changed, failures: result.failures.length, badMonths: badMonths.length,
      // where the time went: reading the demand aggregates, fitting (with the rows' details), writing curves and events
      threads: result.threads, readMs: Math.round(readMs), fitMs: Math.round(fitMs), writeMs: Math.round(writeMs) },
    status: result.failures.length || badMonths.length ? 'partial' : 'ok',
  }
}

export const fitStage: Stage = {
  name: 'fit',
  description: 'demand curves per skill: trend, half-life, significance (BH across skills), change, emergence, forecast and lifecycle state',
  subscribesTo: ['documents.mapped'],
  async run(ctx: StageContext): Promise<StageResult> {
    return runFit(ctx.db, ctx.config, { log: ctx.log, rebuild: ctx.options['rebuild'] === true })
  },
}
