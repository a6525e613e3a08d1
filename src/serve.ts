/**
 * @module serve
 * `tides serve`: the dashboard/API server on loopback by default, plus the schedules.
 */
import { serve as serveHttp } from '@hono/node-server'
import type { AddressInfo } from 'node:net'
import { JOBS } from '../jobs/index.ts'
import type { Config } from './config.ts'
import type { Db } from './db/connection.ts'
import { ServeError } from './errors.ts'
import { ripple, withPipelineLock } from './pipeline.ts'
import { startSchedules, type Scheduler } from './schedule.ts'
import { createApp, warmUp, type AppOptions } from './server/app.ts'

export interface Running {
  url: string
  readonly scheduler: Scheduler | null
  /** starts the schedules if they are not running yet (npm start does so after the first pipeline run) */
  startSchedules(): void
  /** resolves when the server has shut down (SIGINT/SIGTERM or close()) */
  closed: Promise<void>
  close(): Promise<void>
}

const LOOPBACK = new Set(['127.0.0.1', '::1', 'localhost'])

export interface ServeOptions {
  schedules: boolean
  log: (m: string) => void
  signals?: boolean
  /** overrides of the app's options (tests pass stand-in actions) */
  app?: Partial<AppOptions>
}

export async function serve(db: Db, config: Config, opts: ServeOptions): Promise<Running> {
  const { host, port } = config.server
  if (!LOOPBACK.has(host)) {
    opts.log(`warning: listening on ${host}, not loopback: anyone who can reach this address can read the dashboard; writes still need the token`)
  }
  let scheduler: Scheduler | null = null
  // a dashboard change (an accepted term, a snooze) emitted events: run the subscribed stages after
  // the response went out, under the pipeline lock, as a scheduled run would
  let rippling = false
  let again = false
  const afterWrite = (): void => {
    if (rippling) {
      again = true // picked up when the current ripple ends
      return
    }
    rippling = true
    again = false
    setImmediate(() => {
      withPipelineLock(db, (lease) => ripple(db, config, opts.log, lease), 5 * 60_000)
        .then((outcomes) => outcomes.forEach((o) => opts.log(`after a dashboard change: ${o.stage} ${o.error ? `failed: ${o.error}` : (o.result?.summary ?? 'done')}`)))
        .catch((err: unknown) => opts.log(`after a dashboard change: not run: ${err instanceof Error ? err.message : String(err)}`))
        .finally(() => {
          rippling = false
          if (again) afterWrite()
        })
    })
  }
  const app = createApp(db, config, { nextRuns: () => scheduler?.nextRuns() ?? [], afterWrite, log: opts.log, ...opts.app })
  const server = await new Promise<ReturnType<typeof serveHttp>>((resolve, reject) => {
    const s = serveHttp({ fetch: app.fetch, hostname: host, port }, () => resolve(s))
    s.once('error', (err: NodeJS.ErrnoException) =>
      reject(
        err.code === 'EADDRINUSE'
          ? new ServeError(`${host}:${port} is already in use (another tides serve or npm start?); stop it, or choose another port with --port or server.port`)
          : err.code === 'EACCES' || err.code === 'EADDRNOTAVAIL'
            ? new ServeError(`cannot listen on ${host}:${port}: ${err.code}`)
            : err,
      ),
    )
  })
  const address = server.address() as AddressInfo
  const url = `http://${host.includes(':') ? `[${host}]` : host}:${address.port}/`
  const begin = (): void => {
    scheduler ??= startSchedules(db, config, JOBS, opts.log)
  }
  if (opts.schedules) begin()
  setImmediate(() => {
    try {
      warmUp(db, config)
    } catch (err) {
      opts.log(`dashboard warm-up failed: ${err instanceof Error ? err.message : String(err)}`)
    }
  })
  let resolveClosed!: () => void
  const closed = new Promise<void>((r) => (resolveClosed = r))
  const close = async () => {
    await scheduler?.stop()
    await new Promise<void>((r) => server.close(() => r()))
    resolveClosed()
  }
  if (opts.signals !== false) {
    const onSignal = () => void close()
    process.once('SIGINT', onSignal)
    process.once('SIGTERM', onSignal)
  }
  return {
    url,
    get scheduler() {
      return scheduler
    },
    startSchedules: begin,
    closed,
    close,
  }
}
