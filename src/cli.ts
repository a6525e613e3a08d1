/**
 * @module cli
 * The `tides` command: parses arguments, calls the stages, prints. Exit 0 on success, 1 on bad input
 * or a failed run (one line saying why on stderr), 2 on a usage error. `--json` prints exactly one
 * JSON document on stdout and nothing else there; progress goes to stderr.
 */
process.env['DOTENV_CONFIG_QUIET'] = 'true' // natural pulls in dotenv, whose banner would break --json

import fs from 'node:fs'
import { parseArgs, type ParseArgsConfig } from 'node:util'
import { IMPORT_KINDS, IMPORTERS, PLANNED_REPORTS, REPORTS, type ImportKind } from './commands/registry.ts'
import { COMMANDS as EXTRA_COMMANDS } from './commands/extra.ts'
import { ConfigError, loadConfig, type Config } from './config.ts'
import { DbError, describeDbFailure, openDb, upgradeNotice, type Db } from './db/connection.ts'
import { closeAbandonedRuns } from './db/runs.ts'
import { BusyError, LockLostError, ServeError } from './errors.ts'
import { NotBuiltError, STAGE_ORDER } from './stage.ts'
import { formatProblem, toCsv } from './util/csv.ts'
import { printTable } from './util/table.ts'

/** Every report name, the built ones and those planned (the usage lists them all). */
const REPORT_NAMES = [...new Set([...PLANNED_REPORTS, ...Object.keys(REPORTS)])]

/** A usage error: wrong command, option or argument (exit 2). */
export class UsageError extends Error {
  override name = 'UsageError'
}

/** Bad input or a failed run (exit 1). */
export class CliError extends Error {
  override name = 'CliError'
}

export interface Io {
  out: (text: string) => void
  err: (text: string) => void
  isTty: boolean
}

export interface CommandContext {
  args: string[]
  io: Io
  /**
   * loads config and opens the database on first use; with `existing`, a database file that is not
   * there is an error (a report on a mistyped --db must not create an empty database and report it)
   */
  open(options?: { existing?: boolean }): { db: Db; config: Config }
  config(): Config
  global: { db?: string; config?: string }
}

export interface Command {
  summary: string
  usage: string
  options: NonNullable<ParseArgsConfig['options']>
  run(ctx: CommandContext, values: Record<string, unknown>, positionals: string[]): Promise<void>
}

const OUTPUT_OPTIONS = {
  json: { type: 'boolean' },
  csv: { type: 'boolean' },
} as const

function printReport(io: Io, name: string, out: ReturnType<(typeof REPORTS)[string]['build']>, values: Record<string, unknown>): void {
  if (values['json']) io.out(JSON.stringify(out.json ?? out.rows, null, 2) + '\n')
  else if (values['csv']) io.out(toCsv(out.rows, out.columns))
  else {
    io.out(printTable(out.rows, out.columns))
    if (out.footer) io.out(out.footer + '\n')
    if (out.rows.length === 0) io.out(`(no ${name} yet)\n`)
  }
}

export const COMMANDS: Record<string, Command> = {
  init: {
    summary: 'create the database (and a config file with a fresh dashboard token if none exists)',
    usage: 'tides init [--force-config]',
    options: { 'force-config': { type: 'boolean' } },
    async run(ctx, values) {
      const { initProject } = await import('./init.ts')
      const result = initProject(ctx.global, Boolean(values['force-config']))
      const { db, config } = ctx.open()
      ctx.io.out(`database ready: ${config.db} (schema ${db.pragma('user_version', { simple: true })})\n`)
      if (result.createdConfig) ctx.io.out(`wrote ${result.configFile}\n`)
      if (result.token) ctx.io.out(`dashboard token (shown once; also in ${result.configFile}): ${result.token}\n`)
    },
  },
  demo: {
    summary: 'generate the fictional demo scenario (Fernhollow Cooperative) and load it',
    usage: 'tides demo [--seed N] [--months N] [--per-month N] [--as-of YYYY-MM-DD] [--no-run]',
    options: { seed: { type: 'string' }, months: { type: 'string' }, 'per-month': { type: 'string' }, 'as-of': { type: 'string' }, 'no-run': { type: 'boolean' } },
    async run(ctx, values) {
      const { runDemo, DemoError } = await import('./demo/load.ts')
      const seed = values['seed'] === undefined ? undefined : intArg('--seed', values['seed'])
      const months = values['months'] === undefined ? undefined : intArg('--months', values['months'])
      const perMonth = values['per-month'] === undefined ? undefined : intArg('--per-month', values['per-month'])
      const { db, config } = ctx.open()
      const asOf = values['as-of'] as string | undefined
      try {
        await runDemo(db, config, { seed, months, perMonth, asOf, run: !values['no-run'], log: (m) => ctx.io.err(m + '\n') })
      } catch (err) {
        if (err instanceof DemoError) throw new CliError(err.message)
        throw err
      }
    },
  },
  import: {
    summary: 'validate and store input files of one kind',
    usage: `tides import <${IMPORT_KINDS.join('|')}> FILE... [--skip-bad] [--wait SECONDS] [--json]`,
    options: { 'skip-bad': { type: 'boolean' }, wait: { type: 'string' }, json: { type: 'boolean' } },
    async run(ctx, values, positionals) {
      const [kind, ...files] = positionals
      if (!kind || !(IMPORT_KINDS as readonly string[]).includes(kind)) throw new UsageError(`import needs a kind: ${IMPORT_KINDS.join(', ')}`)
      if (files.length === 0) throw new UsageError(`import ${kind} needs at least one FILE`)
      const importer = IMPORTERS[kind as ImportKind]
      if (!importer) throw new NotBuiltError(`import of ${kind} is not built in this version`)
      const waitMs = values['wait'] === undefined ? 0 : intArg('--wait', values['wait']) * 1000
      const { db, config } = ctx.open()
      const results: Awaited<ReturnType<typeof importer>>[] = []
      let badRows = false
      let unreadable = false
      // an import writes what the stages read (documents and their dedupe bands, the taxonomy, the
      // workforce tables), so it takes the pipeline lock as a run does: never in the middle of one
      const { withPipelineLock } = await import('./lock.ts')
      await withPipelineLock(
        db,
        async (lease) => {
          for (const file of files) {
            lease.keep(`importing ${file}`)
            const r = await importer(db, config, file, { skipBad: Boolean(values['skip-bad']), log: (m) => ctx.io.err(m + '\n') })
            results.push(r)
            if (!values['json']) {
              for (const p of r.problems.slice(0, 50)) ctx.io.err(formatProblem(p) + '\n')
              if (r.problems.length > 50) ctx.io.err(`... and ${r.problems.length - 50} more problems\n`)
            }
            // refused for the file as a whole (missing, not a file, wrong format or header) or for bad rows
            if (r.refused && r.whole) unreadable = true
            else if (r.refused) badRows = true
            else if (!values['json']) ctx.io.err(`${file}: ${r.imported} ${kind} imported of ${r.read} read${r.skipped ? `, ${r.skipped} bad rows skipped` : ''}\n`)
          }
        },
        waitMs,
      )
      if (values['json']) ctx.io.out(JSON.stringify(results, null, 2) + '\n')
      if (badRows) throw new CliError(`nothing imported from a file with bad rows; fix them or pass --skip-bad to import the good rows`)
      if (unreadable) throw new CliError(`nothing imported from a file that could not be read as ${kind} (see above)`)
    },
  },
  run: {
    summary: 'run a pipeline stage now (events then run the stages subscribed to it)',
    usage: `tides run <${STAGE_ORDER.join('|')}|all> [--source ID] [--calibrate] [--rebuild] [--only] [--wait SECONDS] [--json]`,
    options: { source: { type: 'string' }, calibrate: { type: 'boolean' }, rebuild: { type: 'boolean' }, only: { type: 'boolean' }, wait: { type: 'string' }, json: { type: 'boolean' } },
    async run(ctx, values, positionals) {
      if (positionals.length === 0) throw new UsageError(`run needs a stage: ${STAGE_ORDER.join(', ')}, all`)
      for (const p of positionals) {
        if (p !== 'all' && !(STAGE_ORDER as readonly string[]).includes(p)) throw new UsageError(`unknown stage "${p}" (stages: ${STAGE_ORDER.join(', ')}, all)`)
      }
      const waitMs = values['wait'] === undefined ? 0 : intArg('--wait', values['wait']) * 1000
      const { db, config } = ctx.open()
      const options: Record<string, unknown> = {}
      if (values['source']) options['source'] = values['source']
      if (values['calibrate']) options['calibrate'] = true
      if (values['rebuild']) options['rebuild'] = true
      // the stages' modules load here, not for every command
      const { runPipeline } = await import('./pipeline.ts')
      const outcomes = await runPipeline(db, config, positionals, { log: (m) => ctx.io.err(m + '\n'), options, ripple: !values['only'], waitMs })
      if (values['json']) ctx.io.out(JSON.stringify(outcomes, null, 2) + '\n')
      else for (const o of outcomes) ctx.io.err(`${o.stage} (${o.trigger}): ${o.error ? `FAILED: ${o.error}` : o.result!.summary} [${(o.ms / 1000).toFixed(1)} s]\n`)
      const failed = outcomes.filter((o) => o.error)
      if (failed.length) throw new CliError(`${failed.map((o) => o.stage).join(', ')} failed: ${failed[0]!.error}`)
    },
  },
  report: {
    summary: 'print a report as a table, --json or --csv',
    usage: `tides report <${REPORT_NAMES.join('|')}> [--json|--csv] [--limit N] [--people]`,
    options: { ...OUTPUT_OPTIONS, limit: { type: 'string' }, people: { type: 'boolean' } },
    async run(ctx, values, positionals) {
      const [name] = positionals
      if (!name) throw new UsageError(`report needs a name: ${REPORT_NAMES.join(', ')}`)
      if (values['json'] && values['csv']) throw new UsageError('choose one of --json and --csv')
      const report = REPORTS[name]
      if (!report) {
        if ((PLANNED_REPORTS as readonly string[]).includes(name)) throw new NotBuiltError(`report ${name} is not built in this version`)
        throw new UsageError(`unknown report "${name}" (reports: ${Object.keys(REPORTS).join(', ')})`)
      }
      // arguments first: a usage error is reported as one, whether or not the database is there
      // a limit of 0 would print an empty report that reads as "nothing there"
      const limit = values['limit'] === undefined ? undefined : intArg('--limit', values['limit'], 1)
      const { db, config } = ctx.open({ existing: true })
      printReport(ctx.io, name, report.build(db, config, { limit, people: Boolean(values['people']) }), values)
    },
  },
  ...EXTRA_COMMANDS,
}

function intArg(name: string, value: unknown, min = 0): number {
  const n = Number(value)
  if (typeof value !== 'string' || !/^\d+$/.test(value) || !Number.isSafeInteger(n) || n < min) {
    throw new UsageError(`${name} needs a whole number${min > 0 ? ` of at least ${min}` : ''}, got "${String(value)}"`)
  }
  return n
}

const GLOBAL_OPTIONS = {
  db: { type: 'string' },
  config: { type: 'string' },
  help: { type: 'boolean', short: 'h' },
} as const

function helpText(): string {
  const width = Math.max(...Object.keys(COMMANDS).map((c) => c.length))
  const lines = [
    'tides: skills-trend and obsolescence monitor',
    '',
    'usage: tides [--db PATH] [--config PATH] <command> [options]',
    '',
    'commands:',
    ...Object.entries(COMMANDS).map(([name, c]) => `  ${name.padEnd(width)}  ${c.summary}`),
    '',
    'global options:',
    '  --db PATH       database file (env TIDES_DB; default .tides/tides.db)',
    '  --config PATH   config file (default ./tides.config.json if present)',
    '  --help          this text; `tides <command> --help` for a command',
    '',
    'With npx, put -- before options so npm does not take them: npx tides -- --db x.db report skills',
  ]
  return lines.join('\n') + '\n'
}

function commandHelp(name: string, c: Command): string {
  const opts = Object.entries(c.options).map(([k, o]) => `  --${k}${o.type === 'string' ? ' VALUE' : ''}`)
  return [`tides ${name}: ${c.summary}`, '', `usage: ${c.usage}`, ...(opts.length ? ['', 'options:', ...opts] : [])].join('\n') + '\n'
}

/**
 * Runs the CLI with the given arguments.
 * @returns the exit code
 */
export async function main(argv: string[], io: Io): Promise<number> {
  // `npx tides -- --db X ...` (the README's form) hands our arguments over behind a `--`
  if (argv[0] === '--') argv = argv.slice(1)
  // global options may come before the command; the first positional is the command
  let globalParsed
  try {
    globalParsed = parseArgs({ args: argv, options: GLOBAL_OPTIONS, allowPositionals: true, strict: false, tokens: true })
  } catch (err) {
    io.err(`tides: ${(err as Error).message}\n`)
    return 2
  }
  const commandToken = globalParsed.tokens.find((t) => t.kind === 'positional')
  const name = commandToken?.kind === 'positional' ? commandToken.value : undefined
  if (!name) {
    if (globalParsed.values['help']) {
      io.out(helpText())
      return 0
    }
    io.err(helpText())
    // an option this level does not know (the command's own options need the command first)
    const unknown = globalParsed.tokens.find((t) => t.kind === 'option' && !(t.name in GLOBAL_OPTIONS))
    const known = Object.keys(GLOBAL_OPTIONS).map((o) => `--${o}`).join(', ')
    io.err(unknown?.kind === 'option' ? `tides: unknown option '${unknown.rawName}' (before a command: ${known})\n` : 'tides: a command is required\n')
    return 2
  }
  const command = COMMANDS[name]
  if (!command) {
    io.err(`tides: unknown command "${name}" (commands: ${Object.keys(COMMANDS).join(', ')}; see tides --help)\n`)
    return 2
  }
  const rest = [...argv.slice(0, commandToken!.index), ...argv.slice(commandToken!.index + 1)]
  let parsed
  try {
    parsed = parseArgs({ args: rest, options: { ...GLOBAL_OPTIONS, ...command.options }, allowPositionals: true, strict: true })
  } catch (err) {
    io.err(`tides ${name}: ${(err as Error).message.split('\n')[0]}\n`)
    io.err(`usage: ${command.usage}\n`)
    return 2
  }
  if (parsed.values['help']) {
    io.out(commandHelp(name, command))
    return 0
  }
  const global = { db: parsed.values['db'] as string | undefined, config: parsed.values['config'] as string | undefined }
  let opened: { db: Db; config: Config } | undefined
  let config: Config | undefined
  const loadCfg = () => (config ??= loadConfig({ file: global.config, db: global.db }))
  const ctx: CommandContext = {
    args: argv,
    io,
    global,
    config: loadCfg,
    open(options) {
      if (!opened) {
        const cfg = loadCfg()
        if (options?.existing && cfg.db !== ':memory:' && !fs.existsSync(cfg.db)) {
          throw new CliError(`no database at ${cfg.db}: create one with \`tides init\` or \`tides demo\`, or give the right --db (or TIDES_DB)`)
        }
        const db = openDb(cfg.db, { onMigrate: (m) => io.err(upgradeNotice(cfg.db, m)) })
        closeAbandonedRuns(db)
        opened = { db, config: cfg }
      }
      return opened
    },
  }
  try {
    await command.run(ctx, parsed.values as Record<string, unknown>, parsed.positionals)
    return 0
  } catch (err) {
    if (err instanceof UsageError) {
      io.err(`tides ${name}: ${err.message}\nusage: ${command.usage}\n`)
      return 2
    }
    if (err instanceof CliError || err instanceof ConfigError || err instanceof DbError || err instanceof NotBuiltError || err instanceof BusyError || err instanceof LockLostError || err instanceof ServeError) {
      io.err(`tides ${name}: ${err.message}\n`)
      return 1
    }
    const dbFailure = describeDbFailure(err, opened?.config.db ?? config?.db)
    if (dbFailure) {
      io.err(`tides ${name}: ${dbFailure}\n`)
      return 1
    }
    io.err(`tides ${name}: unexpected error: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}\n`)
    return 1
  } finally {
    if (opened && !(command as { keepOpen?: boolean }).keepOpen) opened.db.close()
  }
}

const isEntry = process.argv[1] !== undefined && import.meta.url === new URL(`file://${process.argv[1]}`).href
if (isEntry) {
  const io: Io = { out: (t) => process.stdout.write(t), err: (t) => process.stderr.write(t), isTty: Boolean(process.stderr.isTTY) }
  main(process.argv.slice(2), io).then((code) => {
    process.exitCode = code
  })
}
