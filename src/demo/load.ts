/**
 * @module demo/load
 * Generates the demo scenario's files and loads them through the real import and ingest paths.
 */
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { NotBuiltError } from '../stage.ts'

export interface DemoOptions {
  seed?: number
  months?: number
  perMonth?: number
  /** run the whole pipeline after loading */
  run: boolean
  /** base URL of a running server that serves <dataDir>/feeds at /feeds/ (the real fetch path) */
  baseUrl?: string
  log: (message: string) => void
}

export async function runDemo(_db: Db, _config: Config, _opts: DemoOptions): Promise<void> {
  throw new NotBuiltError('the demo scenario is not built in this version')
}
