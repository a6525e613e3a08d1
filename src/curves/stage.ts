/**
 * @module curves/stage
 * The fit stage: builds every skill's monthly demand series from the demand aggregates the map stage
 * keeps (so its cost does not grow with the number of documents), fits the demand curves (trend,
 * half-life, significance across skills, change, emergence, forecast and lifecycle state), and in
 * one transaction replaces `curves` and emits `curves.fitted` plus one `skill.state-changed` per skill
 * whose state moved. Runs after `documents.mapped`. (The dashboard charts the same aggregates.)
 * A run whose demand, taxonomy, configuration and code are those of the last fit keeps its curves
 * (a run of 20,000 skills costs about 5 s at a million postings, for the same results).
 */
import crypto from 'node:crypto'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { demandVersion, readConceptLabelList, readCurveStates, readDemandCountArrays, readDemandTotals, rebuildDemandCounts, replaceCurves } from '../db/curves.ts'
import { readStageMark, writeStageMark } from '../db/runs.ts'
import { taxonomyVersion } from '../db/taxonomy.ts'
import type { CurveRow } from '../db/curves.ts'
import { emit } from '../events/outbox.ts'
import type { Stage, StageContext, StageResult } from '../stage.ts'
import { fitAll } from './fit-all.ts'
import type { SkillCurve } from './fit-skill.ts'
import { isMonth } from './months.ts'
import { fitCodeKey } from './source-key.ts'
import { consecutiveMonths, encodeSeries } from './stored-series.ts'
import type { SeriesLayout } from './stored-series.ts'
import type { SkillSeriesInput } from './series.ts'
import type { SkillState } from './state.ts'

const FLAGGED: readonly string[] = ['emerging', 'rising', 'declining', 'fading']

/**
 * One series input per concept of the taxonomy, on the months with documents that are well-formed
 * YYYY-MM (a month with no documents of a kind has N = 0 there: missing for that series, not zero
 * demand), and the months left out for their form. Read from the demand aggregates the map stage
 * keeps, so its cost depends on concepts x months, not on the number of documents.
 *
 * @example
 * ```ts
 * demandInputs(db).inputs[0] // => { id, label, months, external: { n, N }, internal?: { n, N } }
 * ```
 */
export function demandInputs(db: Db): { inputs: SkillSeriesInput[]; months: string[]; badMonths: string[] } {
  const totalRows = readDemandTotals(db)
  const allMonths = [...new Set(totalRows.map((row) => row.month))].sort()
  const months = allMonths.filter((month) => isMonth(month))
  const position = new Map(months.map((month, i) => [month, i]))
  const totals: Record<'external' | 'internal', number[]> = { external: new Array<number>(months.length).fill(0), internal: new Array<number>(months.length).fill(0) }
  for (const row of totalRows) {
    const at = position.get(row.month)
    if (at !== undefined && (row.series === 'external' || row.series === 'internal')) totals[row.series][at] = row.total
  }
  const hasExternal = totals.external.some((total) => total > 0)
  const hasInternal = totals.internal.some((total) => total > 0)
  const counts = readDemandCountArrays(db, months)
  const inputs: SkillSeriesInput[] = []
  for (const [id, label] of readConceptLabelList(db)) {
    const own = counts.get(id)
    const input: SkillSeriesInput = { id, label, months }
    if (hasExternal) input.external = { n: own?.external ?? new Array<number>(months.length).fill(0), N: totals.external }
    if (hasInternal) input.internal = { n: own?.internal ?? new Array<number>(months.length).fill(0), N: totals.internal }
    inputs.push(input)
  }
  return { inputs, months, badMonths: allMonths.filter((month) => !isMonth(month)) }
}

type MonthSeries = { months: readonly string[]; values: number[] }

function isMonthSeries(x: unknown): x is MonthSeries {
  return typeof x === 'object' && x !== null && Array.isArray((x as MonthSeries).months) && Array.isArray((x as MonthSeries).values)
}

/**
 * A month series as stored in details_json when it cannot go in the binary column (see
 * curves/stored-series.ts): its first month and its values when the months are consecutive
 * (`{ start, values }`; server/payloads.ts readMonthSeries expands it), else as it is.
 */
export function compactSeries<T>(series: T): T | { start: string; values: number[] } {
  if (!isMonthSeries(series) || series.months.length === 0 || series.months.length !== series.values.length) return series
  return consecutiveMonths(series.months) ? { start: series.months[0]!, values: series.values } : series
}

const finite = (x: number | null | undefined): number | null => (x !== null && x !== undefined && Number.isFinite(x) ? x : null)

/**
 * The stored details: the curve's details (the month series left out when they go in the binary
 * column, else compacted) and the curve's figures that the columns do not hold. Written as two
 * JSON texts joined, not as one object: copying the details' 26 keys into an object with seven
 * more made V8 leave its fast object shapes, about 25 µs a curve (0.5 s of a fit of 20,000 skills,
 * measured), where a copy with only the details' own keys costs under 1 µs.
 */
function detailsJson(curve: SkillCurve, layout: SeriesLayout | null): string {
  const details = curve.details
  // the month series go in the binary column when they have its shape (undefined: left out)
  const own = JSON.stringify(
    layout
      ? { ...details, fitted: undefined, combined: undefined, forecast: undefined, latestMonth: curve.latestMonth }
      : { ...details, fitted: compactSeries(details['fitted']), combined: compactSeries(details['combined']), latestMonth: curve.latestMonth },
  )
  const added = JSON.stringify({
    seriesLayout: layout ?? undefined,
    stateReason: curve.stateReason,
    beta: curve.beta,
    betaInterval: curve.betaInterval,
    mannKendall: curve.mannKendall,
    senSlope: curve.senSlope,
  })
  // a key of the details that is also added (none in the fit's details) is read as the added one,
  // the later of the two, as JSON.parse reads repeated keys
  return own === '{}' ? added : `${own.slice(0, -1)},${added.slice(1)}`
}

/** The stored row of a fitted curve; details carry the method figures the columns do not. */
export function curveRow(curve: SkillCurve, fittedAt: string): CurveRow {
  const series = encodeSeries(curve.details)
  return {
    concept_id: curve.id,
    state: curve.state,
    annual_growth: finite(curve.annualGrowth),
    growth_low: finite(curve.annualGrowthInterval?.[0]),
    growth_high: finite(curve.annualGrowthInterval?.[1]),
    half_life_months: finite(curve.halfLifeMonths),
    half_life_low: finite(curve.halfLifeInterval?.[0]),
    half_life_high: finite(curve.halfLifeInterval?.[1]),
    p_value: finite(curve.pValue),
    p_adjusted: finite(curve.pAdjusted),
    latest_share: finite(curve.latestShare),
    forecast_share12: finite(curve.forecastShare12),
    forecast_method: curve.forecastMethod,
    change_month: curve.changeMonth,
    emerged_month: curve.emergedMonth,
    details_json: detailsJson(curve, series?.layout ?? null),
    series: series?.blob ?? null,
    fitted_at: fittedAt,
  }
}

/** The evidence a `skill.state-changed` event carries. */
function stateEvent(curve: SkillCurve, before: string | null): Record<string, unknown> {
  return {
    id: curve.id,
    label: curve.label,
    before,
    after: curve.state,
    reason: curve.stateReason,
    evidence: {
      annualGrowth: finite(curve.annualGrowth),
      annualGrowthInterval: curve.annualGrowthInterval,
      halfLifeMonths: finite(curve.halfLifeMonths),
      halfLifeInterval: curve.halfLifeInterval,
      pValue: finite(curve.pValue),
      pAdjusted: finite(curve.pAdjusted),
      mannKendall: curve.mannKendall ? { tau: curve.mannKendall.tau, p: curve.mannKendall.pValue, seasonal: curve.mannKendall.seasonal } : null,
      changeMonth: curve.changeMonth,
      emergedMonth: curve.emergedMonth,
      latestMonth: curve.latestMonth,
      latestShare: finite(curve.latestShare),
      forecastShare12: finite(curve.forecastShare12),
      forecastMethod: curve.forecastMethod,
    },
  }
}

export interface FitRunOptions {
  /**
   * repair first: recompute the demand aggregates from documents and mentions, and fit even when
   * nothing changed (`tides run fit --rebuild`)
   */
  rebuild?: boolean
  /** the moment recorded as fitted_at (default: now) */
  now?: Date
  log?: (message: string) => void
}

/**
 * Run the fit stage on a database. Exported for tests and the CLI; the pipeline calls it through
 * {@link fitStage}.
 *
 * A skill enters `skill.state-changed` when its state differs from the stored one; a skill fitted
 * for the first time only when it is flagged (emerging, rising, declining, fading), so that a first
 * run does not announce thousands of steady skills.
 *
 * Skips (no writes, no events) while the demand aggregates' version, the taxonomy's version, the
 * curves configuration and the fit's code are those its last run stored (stage mark 'fit'): a fit of
 * the same inputs gives the same curves. A hand-made SQL change of the aggregates is not seen:
 * `rebuild` fits anyway.
 */
export function runFit(db: Db, config: Config, options: FitRunOptions = {}): StageResult {
  const log = options.log ?? (() => {})
  const started = performance.now()
  if (options.rebuild) log(`fit: demand aggregates rebuilt from documents and mentions (${rebuildDemandCounts(db)} rows)`)
  // read before the demand, so that a change after it makes the next run fit again
  const version = demandVersion(db)
  const code = fitCodeKey()
  const configHash = crypto.createHash('sha256').update(JSON.stringify([config.curves, taxonomyVersion(db), code])).digest('hex')
  const mark = readStageMark(db, 'fit')
  if (!options.rebuild && code !== null && mark && mark.inputs === version && mark.configHash === configHash) {
    const partial = (mark.counts['failures'] ?? 0) > 0 || (mark.counts['badMonths'] ?? 0) > 0
    return {
      summary: `demand, taxonomy and settings unchanged since the fit at ${mark.updatedAt}: curves kept`,
      counts: { ...mark.counts, stateChanges: 0, skipped: 1 },
      status: partial ? 'partial' : 'ok',
    }
  }
  const { inputs, months, badMonths } = demandInputs(db)
  const readMs = performance.now() - started
  if (badMonths.length) log(`fit: left out documents whose month is not YYYY-MM: ${badMonths.slice(0, 5).map((m) => JSON.stringify(m)).join(', ')}${badMonths.length > 5 ? ', …' : ''}`)
  log(`fit: ${inputs.length} skills over ${months.length} months (${months[0] ?? '-'} to ${months.at(-1) ?? '-'})`)
  const previous = readCurveStates(db)
  const fitStarted = performance.now()
  const result = fitAll(inputs, config.curves, previous)
  const fitMs = performance.now() - fitStarted
  for (const failure of result.failures) log(`fit: skill ${failure.id} skipped: ${failure.error}`)
  const fittedAt = (options.now ?? new Date()).toISOString()
  const states: Record<string, number> = {}
  let changed = 0
  const writeStarted = performance.now()
  db.transaction(() => {
    // rows made one at a time as they are written: each details string can go once it is stored
    replaceCurves(db, (function* () {
      for (const curve of result.curves) yield curveRow(curve, fittedAt)
    })())
    for (const curve of result.curves) {
      states[curve.state] = (states[curve.state] ?? 0) + 1
      const before = previous.get(curve.id) ?? null
      if (before === curve.state) continue
      if (before === null && !FLAGGED.includes(curve.state)) continue
      emit(db, 'skill.state-changed', stateEvent(curve, before))
      changed++
    }
    emit(db, 'curves.fitted', {
      skills: result.curves.length,
      tested: result.tested,
      failures: result.failures.length,
      states,
      stateChanges: changed,
      months: months.length,
      latestMonth: months.at(-1) ?? null,
      q: config.curves.q,
    })
    // (the counts that say what was fitted, not the timings: a kept run repeats them)
    const counts = { skills: result.curves.length, tested: result.tested, stateChanges: changed, failures: result.failures.length, badMonths: badMonths.length }
    writeStageMark(db, 'fit', { inputs: version, day: '', configHash, counts, updatedAt: fittedAt })
  })()
  const writeMs = performance.now() - writeStarted
  const seconds = (performance.now() - started) / 1000
  const summary =
    `fitted ${result.curves.length} skills in ${seconds.toFixed(1)} s: ` +
    (['emerging', 'rising', 'steady', 'declining', 'fading', 'insufficient-evidence'] as SkillState[]).map((state) => `${states[state] ?? 0} ${state}`).join(', ') +
    `; ${changed} state change${changed === 1 ? '' : 's'}` +
    (result.failures.length ? `; ${result.failures.length} skipped (bad input)` : '')
  return {
    summary,
    counts: { skills: result.curves.length, tested: result.tested, stateChanges: changed, failures: result.failures.length, badMonths: badMonths.length,
      // where the time went: reading the demand aggregates, fitting, writing curves and events
      readMs: Math.round(readMs), fitMs: Math.round(fitMs), writeMs: Math.round(writeMs) },
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
