/**
 * @module stage
 * The contract every pipeline stage implements. A stage reads only the tables before it, writes only
 * its own inside one transaction (or one per batch), records a job run, and emits its event(s) through
 * the outbox inside that transaction. See DEVELOPERS.md "Adding a stage".
 */
import type { Config } from './config.ts'
import type { Db } from './db/connection.ts'

export type StageName = 'ingest' | 'map' | 'fit' | 'ability' | 'plan'

/** The stages in pipeline order (stages.ts registers their modules in this order). */
export const STAGE_ORDER: readonly StageName[] = ['ingest', 'map', 'fit', 'ability', 'plan']

export interface StageContext {
  db: Db
  config: Config
  /** progress and diagnostics; goes to stderr, never stdout */
  log: (message: string) => void
  /** what started this run: 'manual', 'schedule', or 'event:<type>' */
  trigger: string
  /** stage-specific options from the command line (e.g. { source: 'x' }, { calibrate: true }) */
  options: Record<string, unknown>
}

export interface StageResult {
  /** one line for humans */
  summary: string
  counts: Record<string, number>
  /** partial = some inputs failed but the rest landed */
  status?: 'ok' | 'partial'
}

export interface Stage {
  name: StageName
  description: string
  /** event types that make this stage run after another stage commits */
  subscribesTo: readonly string[]
  run(ctx: StageContext): Promise<StageResult>
}

/** Thrown for a stage that is named in the CLI but not part of this build yet. */
export class NotBuiltError extends Error {
  override name = 'NotBuiltError'
}
