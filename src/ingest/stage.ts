/**
 * @module ingest/stage
 * The `ingest` stage: runs every configured source (or the one named by `--source`), each with its
 * own job run (counts read/new/duplicate/rejected, the error, and the first problems in details).
 * A source that fails is recorded as failed and the others keep running; the stage itself fails
 * only when every source it ran failed.
 */
import type { Config, SourceConfig } from '../config.ts'
import { describeDbFailure, type Db } from '../db/connection.ts'
import { upsertSource } from '../db/documents.ts'
import { finishRun, startRun } from '../db/runs.ts'
import type { Stage, StageResult } from '../stage.ts'
import { runFolder } from './inbox.ts'
import { createProgress } from './progress.ts'
import { type SourceEnv, type SourceOutcome, runFeed, runJsonLines, runRequests } from './run-source.ts'
import { BatchWriter, type IngestCounts, addCounts, emptyCounts } from './writer.ts'

export interface SourceRunReport {
  source: string
  runId: number
  status: 'ok' | 'partial' | 'failed'
  counts: IngestCounts
  error: string | null
  ms: number
}

/**
 * Runs one source and records its job run.
 * @param env db, config and (in tests) fetch settings
 */
export async function ingestSource(env: SourceEnv, source: SourceConfig, trigger: string, log: (m: string) => void = () => {}): Promise<SourceRunReport> {
  const started = performance.now()
  const row = upsertSource(env.db, { id: source.id, kind: source.kind, location: source.location, schedule: source.schedule ?? null, options: source.options })
  const runId = startRun(env.db, 'ingest', trigger, source.id)
  const progress = createProgress(`ingest ${source.id}`)
  let fraction: number | undefined
  const writer = new BatchWriter(env.db, env.config, source.id, runId, (c) => progress.update(c.read, fraction))
  const onFraction = (f: number) => (fraction = f)
  let outcome: SourceOutcome
  try {
    switch (source.kind) {
      case 'feed':
        outcome = await runFeed(env, source, row, writer)
        break
      case 'jsonl':
        outcome = await runJsonLines(env, source, row, writer, 'postings', onFraction)
        break
      case 'requests':
        outcome = await runRequests(env, source, row, writer, onFraction)
        break
      case 'folder':
        outcome = await runFolder(env, source, row, writer)
        break
    }
    // the band rows held back for a sorted run (a failed run leaves them to the next writer)
    writer.finish()
  } catch (err) {
    const e = err as NodeJS.ErrnoException
    // a database failure (disk full, read-only, I/O) says so plainly, naming the database
    const message = e.code === 'ENOENT' ? `cannot read ${source.location}: no such file or folder` : (describeDbFailure(err, env.db.name) ?? e.message)
    outcome = { error: message, failed: true, details: {} }
  } finally {
    progress.done()
  }
  const counts = writer.counts
  const status: SourceRunReport['status'] = outcome.failed ? 'failed' : outcome.error || counts.rejected > 0 ? 'partial' : 'ok'
  const ms = performance.now() - started
  const details = {
    ...outcome.details,
    ...counts,
    problems: writer.problems,
    problemCount: writer.problemCount,
    ms: Math.round(ms),
    docsPerSecond: ms > 0 ? Math.round((counts.read * 1000) / ms) : null,
  }
  finishRun(env.db, runId, status, counts, outcome.error, details)
  const summary = `${source.id}: ${status}${outcome.error ? ` (${outcome.error})` : ''}, read ${counts.read}, new ${counts.new}, duplicate ${counts.duplicate}, rejected ${counts.rejected}`
  log(summary)
  return { source: source.id, runId, status, counts, error: outcome.error, ms }
}

/**
 * Runs the configured sources in order (all, or only `only`).
 * @throws Error for an unknown source id
 */
export async function ingestSources(db: Db, config: Config, opts: { only?: string; trigger?: string; log?: (m: string) => void; fetch?: SourceEnv['fetch'] } = {}): Promise<SourceRunReport[]> {
  const sources = opts.only === undefined ? config.sources : config.sources.filter((s) => s.id === opts.only)
  if (opts.only !== undefined && sources.length === 0) {
    throw new Error(`unknown source "${opts.only}" (configured: ${config.sources.map((s) => s.id).join(', ') || 'none'})`)
  }
  const reports: SourceRunReport[] = []
  for (const source of sources) reports.push(await ingestSource({ db, config, fetch: opts.fetch }, source, opts.trigger ?? 'manual', opts.log))
  return reports
}

export const ingestStage: Stage = {
  name: 'ingest',
  description: 'fetch and read the configured sources (feeds, JobPosting JSON Lines, request logs, inbox folders) into deduplicated documents',
  subscribesTo: [],
  async run(ctx): Promise<StageResult> {
    const only = typeof ctx.options['source'] === 'string' ? (ctx.options['source'] as string) : undefined
    const reports = await ingestSources(ctx.db, ctx.config, { only, trigger: ctx.trigger, log: ctx.log })
    if (reports.length === 0) return { summary: 'no sources configured (add "sources" to tides.config.json, or use tides import)', counts: { sources: 0 } }
    const total = reports.reduce((acc, r) => addCounts(acc, r.counts), emptyCounts())
    const failed = reports.filter((r) => r.status === 'failed')
    if (failed.length === reports.length) {
      throw new Error(failed.map((r) => `${r.source}: ${r.error}`).join('; '))
    }
    const notes = reports.filter((r) => r.status !== 'ok').map((r) => `${r.source} ${r.status}${r.error ? `: ${r.error}` : ''}`)
    return {
      summary: `${reports.length} source(s): read ${total.read}, new ${total.new}, duplicate ${total.duplicate}, rejected ${total.rejected}${notes.length ? `; ${notes.join('; ')}` : ''}`,
      counts: { sources: reports.length, failedSources: failed.length, ...total },
      status: notes.length ? 'partial' : 'ok',
    }
  },
}
