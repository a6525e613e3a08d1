/**
 * @module main
 * `npm start`: the main job on the embedded default. Starts the dashboard server on loopback (it also
 * serves the demo's feed files), builds the demo scenario into the local SQLite file through the real
 * ingest path if the database has none yet, runs the whole pipeline once, then keeps serving with the
 * schedules running. Progress goes to stderr; the URL is printed when the dashboard is ready.
 */
process.env['DOTENV_CONFIG_QUIET'] = 'true'

import { ConfigError, loadConfig } from './config.ts'
import { DbError, getSetting, openDb, upgradeNotice } from './db/connection.ts'
import { closeAbandonedRuns } from './db/runs.ts'
import { runDemo } from './demo/load.ts'
import { runPipeline } from './pipeline.ts'
import { BusyError, LockLostError, ServeError } from './errors.ts'
import { serve } from './serve.ts'

async function start(): Promise<void> {
  const started = performance.now()
  const log = (m: string) => process.stderr.write(`[${((performance.now() - started) / 1000).toFixed(1)}s] ${m}\n`)
  const config = loadConfig()
  const db = openDb(config.db, { onMigrate: (m) => log(upgradeNotice(config.db, m).trimEnd()) })
  closeAbandonedRuns(db)
  log(`database ${config.db}`)
  const running = await serve(db, config, { schedules: false, log })
  if (getSetting(db, 'demo.seed') === undefined) {
    log('building the demo scenario (Fernhollow Cooperative, fictional) ...')
    await runDemo(db, config, { run: true, baseUrl: running.url, log })
  } else {
    log('demo already loaded; running the pipeline once ...')
    await runDemo(db, config, { run: false, baseUrl: running.url, log })
    const outcomes = await runPipeline(db, config, ['all'], { log, waitMs: 60_000 })
    for (const o of outcomes) log(`${o.stage}: ${o.error ? `FAILED: ${o.error}` : o.result!.summary}`)
  }
  running.startSchedules()
  log(`ready in ${((performance.now() - started) / 1000).toFixed(1)} s`)
  process.stdout.write(`\nskill-tides dashboard: ${running.url}\n(estimates with uncertainty; a human decides. Ctrl-C stops.)\n`)
}

start().catch((err: unknown) => {
  const known = err instanceof ConfigError || err instanceof DbError || err instanceof ServeError || err instanceof BusyError || err instanceof LockLostError
  process.stderr.write(`tides: ${known ? (err as Error).message : err instanceof Error ? (err.stack ?? err.message) : String(err)}\n`)
  process.exit(1)
})
