/**
 * @module demo/load
 * Generates the demo scenario's files and loads them through the real import and ingest paths:
 * the CSV kinds go through the same importers as `tides import`, the postings and requests are
 * registered as sources (the feeds fetched over HTTP from the running server when its URL is known),
 * and the pipeline then runs as it would on a real organisation's data.
 */
import path from 'node:path'
import { IMPORTERS } from '../commands/registry.ts'
import type { Config, SourceConfig } from '../config.ts'
import { getSetting, setSetting, type Db } from '../db/connection.ts'
import { runPipeline } from '../pipeline.ts'
import { formatProblem } from '../util/csv.ts'
import { todayUtc } from './calendar.ts'
import { DEFAULT_PARAMS, DEMO_TABLES, DemoError, checkParams, generateDemo, manifestFilesExist, readManifest, type DemoManifest, type DemoParams } from './generate.ts'

export { DemoError } from './generate.ts'

export interface DemoOptions {
  seed?: number
  months?: number
  perMonth?: number
  /** run the whole pipeline after loading */
  run: boolean
  /** base URL of a running server that serves <dataDir>/feeds at /feeds/ (the real fetch path) */
  baseUrl?: string
  log: (message: string) => void
  /** last day of the demo period, YYYY-MM-DD (default: today, so the dashboard looks live) */
  asOf?: string
  /** people at Fernhollow (default 3000) */
  people?: number
}

/** Settings keys the demo writes. */
export const DEMO_SETTINGS = { seed: 'demo.seed', params: 'demo.params' } as const

/** Where the demo keeps a source's schedule: current feed pages hourly (staggered), exports and requests nightly. */
const FEED_SCHEDULES = ['5 * * * *', '25 * * * *', '45 * * * *']

/**
 * The parameters for this run: the options given, else those of the demo already in the database,
 * else the defaults (with today as the as-of date).
 */
export function resolveParams(db: Db, opts: Pick<DemoOptions, 'seed' | 'months' | 'perMonth' | 'asOf' | 'people'>): DemoParams {
  let stored: Partial<DemoParams> = {}
  const raw = getSetting(db, DEMO_SETTINGS.params)
  if (raw) {
    try {
      stored = JSON.parse(raw) as Partial<DemoParams>
    } catch {
      stored = {}
    }
  }
  const asOf = opts.asOf ?? stored.asOf ?? todayUtc()
  const params: DemoParams = {
    seed: opts.seed ?? stored.seed ?? DEFAULT_PARAMS.seed,
    months: opts.months ?? stored.months ?? DEFAULT_PARAMS.months,
    perMonth: opts.perMonth ?? stored.perMonth ?? DEFAULT_PARAMS.perMonth,
    asOf,
    people: opts.people ?? stored.people ?? DEFAULT_PARAMS.people,
    feedPageSize: stored.feedPageSize ?? DEFAULT_PARAMS.feedPageSize,
  }
  checkParams(params)
  return params
}

function sameParams(a: DemoParams, b: DemoParams): boolean {
  return JSON.stringify(a) === JSON.stringify(b)
}

/**
 * The sources that read the demo's postings and requests. Feeds point at the running server when
 * `baseUrl` is given (so the real HTTP fetch path runs), else at the files themselves.
 */
export function demoSources(dataDir: string, manifest: DemoManifest, baseUrl?: string): SourceConfig[] {
  const base = baseUrl ? (baseUrl.endsWith('/') ? baseUrl : `${baseUrl}/`) : null
  const sources: SourceConfig[] = []
  let current = 0
  for (const f of manifest.feeds) {
    const name = path.basename(f.file)
    sources.push({
      id: `demo-${name.replace(/\.(rss|atom)$/, '')}`,
      kind: 'feed',
      location: base ? `${base}feeds/${name}` : path.join(dataDir, f.file),
      // archive pages never change; only the current page of each board is polled
      ...(f.current ? { schedule: FEED_SCHEDULES[current++ % FEED_SCHEDULES.length]! } : {}),
      options: {},
    })
  }
  for (const j of manifest.jsonl) {
    sources.push({ id: `demo-${j.channel}`, kind: 'jsonl', location: path.join(dataDir, j.file), schedule: '30 3 * * *', options: {} })
  }
  sources.push({ id: 'demo-requests', kind: 'requests', location: path.join(dataDir, manifest.requests), schedule: '40 3 * * *', options: {} })
  return sources
}

/** Adds the demo sources to the config, replacing earlier ones with the same id. */
export function registerSources(config: Config, sources: readonly SourceConfig[]): void {
  for (const s of sources) {
    const i = config.sources.findIndex((x) => x.id === s.id)
    if (i >= 0) config.sources[i] = s
    else config.sources.push(s)
  }
}

/** Imports the demo's CSV kinds through the same importers as `tides import`. */
export async function importDemoTables(db: Db, config: Config, manifest: DemoManifest, log: (m: string) => void): Promise<Record<string, number>> {
  const counts: Record<string, number> = {}
  for (const kind of DEMO_TABLES) {
    const importer = IMPORTERS[kind]
    if (!importer) throw new DemoError(`the ${kind} importer is not built; the demo cannot load its ${kind}`)
    const file = path.join(config.dataDir, manifest.tables[kind])
    const result = await importer(db, config, file, { skipBad: false, log })
    if (result.refused) {
      const first = result.problems.slice(0, 5).map(formatProblem).join('; ')
      throw new DemoError(`demo ${kind} did not import (${result.problems.length} problems): ${first}`)
    }
    counts[kind] = result.imported
  }
  return counts
}

/**
 * Builds the demo: generates its files (unless the same ones are already there), registers its
 * sources, imports its CSV kinds (unless already imported), records the seed, and when `run` is set
 * runs the whole pipeline.
 * @throws DemoError for unusable parameters or demo files that did not import
 */
export async function runDemo(db: Db, config: Config, opts: DemoOptions): Promise<void> {
  const log = opts.log
  const params = resolveParams(db, opts)
  const dataDir = config.dataDir
  let manifest = readManifest(dataDir)
  if (manifest && sameParams(manifest.params, params) && manifestFilesExist(dataDir, manifest)) {
    log(`demo: files for seed ${params.seed} to ${params.asOf} already in ${dataDir}`)
  } else {
    log(`demo: generating Fernhollow Cooperative (fictional), seed ${params.seed}, ${params.months} months to ${params.asOf}, ~${params.perMonth} postings a month ...`)
    manifest = generateDemo(dataDir, params, log)
  }
  const sources = demoSources(dataDir, manifest, opts.baseUrl)
  registerSources(config, sources)
  log(`demo: ${sources.length} sources registered (${manifest.feeds.length} feeds${opts.baseUrl ? ` via ${opts.baseUrl}` : ''}, ${manifest.jsonl.length} JSON Lines, 1 request log)`)

  const loaded = getSetting(db, DEMO_SETTINGS.params)
  if (loaded !== JSON.stringify(params)) {
    if (loaded) log('demo: this database already holds a demo built with other parameters; its rows are updated in place (use a fresh --db for a clean scenario)')
    const started = performance.now()
    const counts = await importDemoTables(db, config, manifest, log)
    setSetting(db, DEMO_SETTINGS.params, JSON.stringify(params))
    log(`demo: imported ${Object.entries(counts).map(([k, n]) => `${n} ${k}`).join(', ')} (${((performance.now() - started) / 1000).toFixed(1)} s)`)
  }
  setSetting(db, DEMO_SETTINGS.seed, String(params.seed))

  if (opts.run) {
    log('demo: running the pipeline (stages not built in this version are skipped) ...')
    const outcomes = await runPipeline(db, config, ['all'], { log, waitMs: 60_000 })
    if (outcomes.length === 0) log('demo: no pipeline stages are built yet')
    for (const o of outcomes) log(`demo: ${o.stage} (${o.trigger}): ${o.error ? `FAILED: ${o.error}` : o.result!.summary} [${(o.ms / 1000).toFixed(1)} s]`)
  }
}
