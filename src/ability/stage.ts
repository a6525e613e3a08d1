/**
 * @module ability/stage
 * The ability stage: item calibration (with --calibrate), ability estimates per person and skill,
 * and coverage of role requirements. Reads items, responses, abilities, people and roles; writes
 * items' calibrated parameters, abilities of origin 'estimate' and the coverage table in one
 * transaction, and emits `ability.updated`. Skips its work (no write, no event) when none of those
 * inputs (the `ability_inputs` counter of migration 12), the UTC day of `now` and its config section
 * changed since its last successful run, unless --calibrate or --rebuild is given.
 *
 * Metric: everything estimated here is on a θ scale where the assessed population is N(0, 1)
 * (the configured prior), unless anchor items with imported parameters set the metric. A Rasch
 * calibration, which estimates the latent SD σ with a = 1, is stored in its equivalent 1PL form on
 * that scale (a = σ for every item of the skill, b = b_logit/σ); fit_json keeps the calibration's
 * own values. Items with imported parameters are anchors: they stay fixed, set the metric, and the
 * mean and SD of the people are estimated alongside the new items.
 */
import type { Stage, StageContext, StageResult } from '../stage.ts'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import crypto from 'node:crypto'
import * as store from '../db/ability.ts'
import { readAbilityInputs } from '../db/workforce.ts'
import { readStageMark, writeStageMark } from '../db/runs.ts'
import { emit } from '../events/outbox.ts'
import { calibrate, type CalibrationResult } from './calibrate.ts'
import { estimateAbilities, fallbackNote } from './estimate.ts'
import { fromTriples } from './response-data.ts'
import type { ItemParams } from './response-function.ts'
import { currentAbilities, type StoredAbility } from './current.ts'
import { buildCoverage } from './coverage-table.ts'

export interface AbilityRunOptions {
  calibrate?: boolean
  /** recompute even when the inputs are unchanged (e.g. after editing the database by hand) */
  rebuild?: boolean
  /** the moment staleness is judged at (default: now) */
  now?: Date
  log?: (message: string) => void
}

interface SkillData {
  items: store.ItemRecord[]
  responses: store.LatestResponse[]
}

function paramsOf(item: store.ItemRecord): ItemParams | null {
  if (item.b === null) return null
  const a = item.a ?? 1
  const c = item.c ?? 0
  if (!(a > 0) || !(c >= 0 && c < 1) || !Number.isFinite(item.b)) return null
  return { a, b: item.b, c }
}

/** Index people and items of one skill into a response matrix; returns the person ids too. */
function matrixOf(items: readonly store.ItemRecord[], responses: readonly store.LatestResponse[]) {
  const itemIndex = new Map(items.map((item, j) => [item.item_id, j]))
  const personIndex = new Map<string, number>()
  const persons: number[] = []
  const itemList: number[] = []
  const values: number[] = []
  const latest: string[] = []
  for (const r of responses) {
    const j = itemIndex.get(r.item_id)
    if (j === undefined) continue
    let p = personIndex.get(r.person_id)
    if (p === undefined) {
      p = personIndex.size
      personIndex.set(r.person_id, p)
      latest.push(r.taken_at)
    } else if (r.taken_at > latest[p]) latest[p] = r.taken_at
    persons.push(p)
    itemList.push(j)
    values.push(r.response)
  }
  const matrix = fromTriples(personIndex.size, items.length, persons, itemList, values)
  return { matrix, personIds: [...personIndex.keys()], latest }
}

function calibrationNote(result: CalibrationResult): string {
  return `${result.model} ${result.converged ? 'converged' : 'NOT converged'} after ${result.cycles} cycles, log-likelihood ${result.logLikelihood.toFixed(3)}`
}

/**
 * Run the ability stage on a database. Exported for tests and the CLI; the pipeline calls it
 * through {@link abilityStage}.
 */
export function runAbility(db: Db, config: Config, options: AbilityRunOptions = {}): StageResult {
  const cfg = config.ability
  const log = options.log ?? (() => {})
  const now = options.now ?? new Date()
  const quadrature = { points: cfg.quadraturePoints }

  // ---- skip when nothing read below changed since the last successful run (migration 12)
  const day = now.toISOString().slice(0, 10)
  const configHash = crypto.createHash('sha256').update(JSON.stringify(cfg)).digest('hex')
  if (!options.calibrate && !options.rebuild) {
    const mark = readStageMark(db, 'ability')
    if (mark && mark.inputs === readAbilityInputs(db) && mark.day === day && mark.configHash === configHash) {
      return {
        summary: `inputs unchanged since the last run at ${mark.updatedAt}: abilities and coverage kept`,
        counts: { ...mark.counts, skipped: 1 },
      }
    }
  }

  const items = store.readItems(db)
  const responses = store.readLatestResponses(db)
  const bySkill = new Map<string, SkillData>()
  const skillOfItem = new Map<string, string>()
  for (const item of items) {
    const data = bySkill.get(item.skill_id) ?? { items: [], responses: [] }
    data.items.push(item)
    bySkill.set(item.skill_id, data)
    skillOfItem.set(item.item_id, item.skill_id)
  }
  for (const r of responses) {
    const skill = skillOfItem.get(r.item_id)
    if (skill !== undefined) bySkill.get(skill)!.responses.push(r)
  }

  // ---- calibration
  const calibrationUpdates: store.ItemCalibrationUpdate[] = []
  let calibrated = 0
  let calibrationProblems = 0
  if (options.calibrate) {
    for (const [skillId, data] of bySkill) {
      const fixed = data.items.map((item) => (item.origin === 'import' ? paramsOf(item) : null))
      if (fixed.every((anchor) => anchor !== null) || data.responses.length === 0) continue
      const { matrix } = matrixOf(data.items, data.responses)
      const anchored = fixed.some((anchor) => anchor !== null)
      const result = calibrate(matrix, {
        model: cfg.calibration.model,
        D: cfg.D,
        quadrature,
        tolerance: cfg.calibration.tolerance,
        maxCycles: cfg.calibration.maxCycles,
        minResponses: cfg.calibration.minResponses,
        fixed,
      })
      // Rasch without anchors: store the equivalent 1PL on the N(0, 1) scale (see module notes)
      const rescale = result.model === 'rasch' && !anchored ? result.populationSd : 1
      log(`calibration of ${skillId}: ${calibrationNote(result)}`)
      for (const item of result.items) {
        if (item.status === 'fixed') continue
        const record = data.items[item.index]
        const usable = item.status === 'converged' && item.params !== null
        if (usable) calibrated++
        else {
          calibrationProblems++
          log(`  item ${record.item_id}: ${item.status}${item.note ? ` (${item.note})` : ''}; not used for ability estimates`)
        }
        calibrationUpdates.push({
          item_id: record.item_id,
          a: usable ? item.params!.a * rescale : null,
          b: usable ? item.params!.b / rescale : null,
          fit_json: JSON.stringify({
            model: result.model,
            status: item.status,
            note: item.note,
            calibrationMetric: item.params ? { a: item.params.a, b: item.params.b, populationMean: result.populationMean, populationSd: result.populationSd } : null,
            se: item.se ? { a: item.se.a === null ? null : item.se.a * rescale, b: item.se.b / rescale } : null,
            fit: item.fit,
            nResponses: item.nResponses,
            proportionCorrect: item.proportionCorrect,
            run: { converged: result.converged, cycles: result.cycles, logLikelihood: result.logLikelihood, anchored, at: now.toISOString() },
          }),
        })
        record.a = usable ? item.params!.a * rescale : null
        record.b = usable ? item.params!.b / rescale : null
        record.c = null
        record.origin = 'calibrated'
      }
    }
  }

  // ---- ability estimates
  const estimates: store.EstimatedAbility[] = []
  let withoutParameters = 0
  let fallbacks = 0
  const skillsEstimated: string[] = []
  for (const [skillId, data] of bySkill) {
    const usableItems = data.items.filter((item) => paramsOf(item) !== null)
    for (const item of data.items) {
      if (item.b !== null && paramsOf(item) === null) log(`item ${item.item_id}: parameters a = ${item.a}, b = ${item.b}, c = ${item.c} are not usable (need a > 0, 0 <= c < 1); its responses were ignored`)
    }
    withoutParameters += data.items.length - usableItems.length
    if (usableItems.length === 0) continue
    const { matrix, personIds, latest } = matrixOf(usableItems, data.responses)
    if (matrix.nPersons === 0) continue
    const params = usableItems.map((item) => paramsOf(item)!)
    const results = estimateAbilities(params, matrix, { method: cfg.method, D: cfg.D, prior: cfg.prior, quadrature })
    results.forEach((estimate, p) => {
      if (estimate.nItems === 0) return
      if (estimate.fallback) fallbacks++
      estimates.push({
        person_id: personIds[p],
        skill_id: skillId,
        theta: estimate.theta,
        se: estimate.se,
        assessed_at: latest[p],
        method: estimate.method,
        note: estimate.fallback ? fallbackNote(estimate.fallback) : null,
      })
    })
    skillsEstimated.push(skillId)
  }
  if (withoutParameters > 0 && !options.calibrate) {
    log(`${withoutParameters} items have no parameters and were not used; run \`tides run ability --calibrate\` to calibrate them`)
  }

  // ---- coverage
  const imported = store.readAbilities(db).filter((row) => row.origin === 'import')
  const stored: StoredAbility[] = [
    ...imported,
    ...estimates.map((e) => ({ personId: e.person_id, skillId: e.skill_id, origin: 'estimate' as const, theta: e.theta, se: e.se, assessedAt: e.assessed_at })),
  ]
  const current = currentAbilities(stored, now, { staleAfterDays: cfg.staleAfterDays, seInflation: cfg.seInflation })
  const coverage = buildCoverage(store.readPeople(db), store.readRequirements(db), current, cfg.intervalLevel)
  const stale = coverage.byRole.reduce((s, row) => s + row.stale, 0)
  const unknown = coverage.byRole.reduce((s, row) => s + row.unknown, 0)

  const counts = {
    items: items.length,
    responses: responses.length,
    estimated: estimates.length,
    fallbacks,
    imported: imported.length,
    calibrated,
    calibrationProblems,
    itemsWithoutParameters: withoutParameters,
    coverageRows: coverage.byRole.length,
    unknown,
    stale,
  }
  db.transaction(() => {
    store.writeCalibration(db, calibrationUpdates)
    store.replaceEstimatedAbilities(db, estimates)
    store.replaceCoverage(db, coverage.byRole, now.toISOString())
    emit(db, 'ability.updated', {
      skills: skillsEstimated,
      estimated: estimates.length,
      imported: imported.length,
      calibrated,
      calibrationProblems,
      coverageRows: coverage.byRole.length,
      unknown,
      stale,
    })
    // read after the writes above, so that they never make the next run recompute
    writeStageMark(db, 'ability', { inputs: readAbilityInputs(db), day, configHash, counts, updatedAt: new Date().toISOString() })
  })()

  const parts = [
    `${estimates.length} abilities estimated in ${skillsEstimated.length} skills${fallbacks ? ` (${fallbacks} by EAP where MLE has no finite value)` : ''}`,
    `coverage of ${coverage.byRole.length} role requirements (${unknown} person-requirements never assessed, ${stale} stale)`,
  ]
  if (options.calibrate) parts.unshift(`${calibrated} items calibrated${calibrationProblems ? `, ${calibrationProblems} could not be` : ''}`)
  if (withoutParameters > 0) parts.push(`${withoutParameters} items without parameters`)
  return {
    summary: parts.join('; '),
    counts,
    status: calibrationProblems > 0 ? 'partial' : 'ok',
  }
}

function nowOption(value: unknown): Date | undefined {
  if (value === undefined) return undefined
  const date = value instanceof Date ? value : new Date(String(value))
  if (Number.isNaN(date.getTime())) throw new RangeError(`ability: option now is not a date: "${String(value)}"`)
  return date
}

export const abilityStage: Stage = {
  name: 'ability',
  description: 'ability estimates from assessment responses (IRT), item calibration with --calibrate, and skill coverage of role requirements',
  subscribesTo: [],
  async run(ctx: StageContext): Promise<StageResult> {
    return runAbility(ctx.db, ctx.config, { calibrate: ctx.options['calibrate'] === true, rebuild: ctx.options['rebuild'] === true, now: nowOption(ctx.options['now']), log: ctx.log })
  },
}
