/**
 * @module pipeline
 * Runs stages and lets events ripple: after a stage commits, every stage subscribed to the events it
 * emitted runs next, until nothing is pending. Cron schedules and the CLI only start the chain.
 * A lock with a lease (lock.ts) keeps two pipeline runs from overlapping.
 */
import type { Config } from './config.ts'
import { describeDbFailure, type Db } from './db/connection.ts'
import { latestEventId } from './db/events.ts'
import { finishRun, startRun } from './db/runs.ts'
import { acknowledge, pendingFor } from './events/outbox.ts'
import { deliverAfterRun } from './events/webhooks.ts'
import { withPipelineLock, type LockLease } from './lock.ts'
import { NotBuiltError, STAGE_ORDER, type Stage, type StageResult } from './stage.ts'
import { STAGES, findStage } from './stages.ts'

export { LEASE_MS, PIPELINE_LOCK, withPipelineLock, type LockLease } from './lock.ts'

export interface RunOptions {
  log?: (message: string) => void
  trigger?: string
  options?: Record<string, unknown>
  /** follow events to subscribed stages after the named stages ran (default true) */
  ripple?: boolean
  /** wait this long for the lock instead of refusing at once */
  waitMs?: number
  /** the lock's lease (default LEASE_MS; shorter only in tests) */
  leaseMs?: number
}

export interface StageOutcome {
  stage: string
  trigger: string
  result?: StageResult
  error?: string
  ms: number
}

function consumerName(stage: Stage): string {
  return `stage:${stage.name}`
}

async function runOne(db: Db, config: Config, stage: Stage, trigger: string, options: Record<string, unknown>, log: (m: string) => void): Promise<StageOutcome> {
  const started = performance.now()
  // the ingest stage records one run per source itself; every other stage gets one run here
  const runId = stage.name === 'ingest' ? null : startRun(db, stage.name, trigger)
  try {
    const result = await stage.run({ db, config, log, trigger, options })
    if (runId !== null) finishRun(db, runId, result.status ?? 'ok', result.counts, null, { summary: result.summary, counts: result.counts })
    return { stage: stage.name, trigger, result, ms: performance.now() - started }
  } catch (err) {
    // a database failure (disk full, read-only, I/O) says so plainly, naming the database
    const message = describeDbFailure(err, db.name) ?? (err instanceof Error ? err.message : String(err))
    if (runId !== null) finishRun(db, runId, 'failed', {}, message)
    return { stage: stage.name, trigger, error: message, ms: performance.now() - started }
  }
}

/**
 * Runs the named stages (or 'all'), then follows events to subscribed stages until none is pending.
 * @throws NotBuiltError for a stage this build does not have
 */
export async function runPipeline(db: Db, config: Config, names: readonly string[], opts: RunOptions = {}): Promise<StageOutcome[]> {
  const log = opts.log ?? (() => {})
  const wanted = names.includes('all') ? STAGE_ORDER.filter((n) => findStage(n)) : names
  const stages = wanted.map((name) => {
    const stage = findStage(name)
    if (!stage) throw new NotBuiltError(`stage "${name}" is not built in this version (built: ${STAGES.map((s) => s.name).join(', ') || 'none'})`)
    return stage
  })
  const result = await withPipelineLock(
    db,
    async (lease) => {
      const outcomes: StageOutcome[] = []
      for (const stage of stages) {
        lease.keep(`stage ${stage.name}`)
        // a direct run handles everything its subscriptions had pending up to now
        const upTo = latestEventId(db)
        const outcome = await runOne(db, config, stage, opts.trigger ?? 'manual', opts.options ?? {}, log)
        outcomes.push(outcome)
        if (!outcome.error) acknowledge(db, consumerName(stage), upTo)
      }
      if (opts.ripple !== false) outcomes.push(...(await ripple(db, config, log, lease)))
      return outcomes
    },
    opts.waitMs ?? 0,
    opts.leaseMs,
  )
  // after the lock is released: the run's work has committed, a slow endpoint delays nobody's run
  await deliverAfterRun(db, config, log)
  return result
}

/**
 * Runs every stage that has pending subscribed events, in pipeline order, until none has.
 * A stage that fails keeps its events pending for the next run (at-least-once). Under the pipeline
 * lock, pass its lease: it is kept before each stage (LockLostError once another run has taken over).
 */
export async function ripple(db: Db, config: Config, log: (m: string) => void = () => {}, lease?: LockLease): Promise<StageOutcome[]> {
  const outcomes: StageOutcome[] = []
  const failed = new Set<string>()
  for (let round = 0; round < 20; round++) {
    let ran = false
    for (const name of STAGE_ORDER) {
      const stage = findStage(name)
      if (!stage || stage.subscribesTo.length === 0 || failed.has(name)) continue
      const pending = pendingFor(db, consumerName(stage), stage.subscribesTo)
      if (pending.events.length === 0) continue
      const types = [...new Set(pending.events.map((e) => e.type))].join(',')
      lease?.keep(`stage ${stage.name}`)
      const outcome = await runOne(db, config, stage, `event:${types}`, {}, log)
      outcomes.push(outcome)
      if (outcome.error) failed.add(name)
      else acknowledge(db, consumerName(stage), pending.upTo)
      ran = true
    }
    if (!ran) break
  }
  return outcomes
}
