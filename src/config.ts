/**
 * @module config
 * tides.config.json: read, validated at start (errors name the bad key), every setting defaulted.
 * Each stage owns its section's schema beside its code; this module assembles them.
 * Environment: TIDES_DB overrides `db`, TIDES_TOKEN overrides `server.token`.
 */
import fs from 'node:fs'
import path from 'node:path'
import cron from 'node-cron'
import { z } from 'zod'
import { abilityConfigSchema } from './ability/config.ts'
import { curvesConfigSchema } from './curves/config.ts'
import { ingestConfigSchema, sourceSchema, webhookSchema } from './ingest/config.ts'
import { planConfigSchema } from './plan/config.ts'
import { serverConfigSchema } from './server/config.ts'
import { taxonomyConfigSchema } from './taxonomy/config.ts'
import { readFailure } from './errors.ts'

export const DEFAULT_CONFIG_FILE = 'tides.config.json'
export const DEFAULT_DB_FILE = '.tides/tides.db'

export const configSchema = z
  .object({
    /** SQLite database path, relative to the config file's folder */
    db: z.string().default(DEFAULT_DB_FILE),
    /** folder for demo files, inbox folders and other working files */
    dataDir: z.string().default('.tides'),
    sources: z.array(sourceSchema).default([]),
    webhooks: z.array(webhookSchema).default([]),
    ingest: ingestConfigSchema.prefault({}),
    taxonomy: taxonomyConfigSchema.prefault({}),
    curves: curvesConfigSchema.prefault({}),
    ability: abilityConfigSchema.prefault({}),
    plan: planConfigSchema.prefault({}),
    server: serverConfigSchema.prefault({}),
  })
  .strict()
  .superRefine((cfg, ctx) => {
    const seen = new Set<string>()
    cfg.sources.forEach((s, i) => {
      if (seen.has(s.id)) ctx.addIssue({ code: 'custom', path: ['sources', i, 'id'], message: `duplicate source id "${s.id}"` })
      seen.add(s.id)
      if (s.schedule !== undefined && !cron.validate(s.schedule)) {
        ctx.addIssue({ code: 'custom', path: ['sources', i, 'schedule'], message: `"${s.schedule}" is not a valid cron expression` })
      }
    })
  })

export type Config = z.infer<typeof configSchema>
export type SourceConfig = Config['sources'][number]

/** A config file that cannot be used; the message names the file and the bad key. */
export class ConfigError extends Error {
  override name = 'ConfigError'
}

export interface LoadOptions {
  /** explicit --config path; when absent, ./tides.config.json is used if it exists */
  file?: string
  /** explicit --db path (beats TIDES_DB and the file) */
  db?: string
  env?: NodeJS.ProcessEnv
}

/**
 * Parses and validates a config object.
 * @throws ConfigError naming each bad key as a dotted path
 */
export function parseConfig(raw: unknown, origin = DEFAULT_CONFIG_FILE): Config {
  const result = configSchema.safeParse(raw)
  if (!result.success) {
    const lines = result.error.issues.map((issue) => {
      const where = issue.path.length ? issue.path.join('.') : '(top level)'
      const keys = 'keys' in issue && Array.isArray(issue.keys) ? ` ${issue.keys.map((k) => `"${k}"`).join(', ')}` : ''
      const msg = issue.code === 'unrecognized_keys' ? `unknown key${keys}` : issue.message
      return `${origin}: ${where}: ${msg}`
    })
    throw new ConfigError(lines.join('\n'))
  }
  return result.data
}

/**
 * Loads the config file (if any), applies the environment, and resolves relative paths against the
 * config file's folder.
 * @throws ConfigError for unreadable JSON or invalid settings
 */
export function loadConfig(options: LoadOptions = {}): Config & { configFile: string | null; baseDir: string } {
  const env = options.env ?? process.env
  let file: string | null = options.file ?? null
  if (file === null && fs.existsSync(DEFAULT_CONFIG_FILE)) file = DEFAULT_CONFIG_FILE
  let raw: unknown = {}
  if (file !== null) {
    let text: string
    try {
      text = fs.readFileSync(file, 'utf8')
    } catch (err) {
      throw new ConfigError(`${file}: cannot read config file: ${readFailure(err)}`)
    }
    try {
      raw = JSON.parse(text)
    } catch (err) {
      // Node 20's message gives a character position only: name the line (and column) as for any file
      const message = (err as Error).message
      const at = /at position (\d+)/.exec(message)
      const before = at ? text.slice(0, Number(at[1])).split('\n') : null
      throw new ConfigError(`${file}${before ? `:${before.length}: column ${before.at(-1)!.length + 1}` : ''}: not valid JSON: ${message}`)
    }
  }
  const config = parseConfig(raw, file ?? DEFAULT_CONFIG_FILE)
  const baseDir = file ? path.dirname(path.resolve(file)) : process.cwd()
  const dbPath = options.db ?? env['TIDES_DB'] ?? config.db
  config.db = dbPath === ':memory:' ? dbPath : path.resolve(options.db || env['TIDES_DB'] ? process.cwd() : baseDir, dbPath)
  config.dataDir = path.resolve(baseDir, config.dataDir)
  const token = env['TIDES_TOKEN']
  if (token) config.server.token = token
  return Object.assign(config, { configFile: file, baseDir })
}
