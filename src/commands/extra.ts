/**
 * @module commands/extra
 * `serve` and `map`: the long-running server with its schedules, and the taxonomy tuning command.
 */
import { UsageError, type Command } from '../cli.ts'

export const COMMANDS: Record<string, Command> = {
  serve: {
    summary: 'run the dashboard and API, and the scheduled jobs',
    usage: 'tides serve [--host HOST] [--port PORT] [--no-schedules]',
    options: { host: { type: 'string' }, port: { type: 'string' }, 'no-schedules': { type: 'boolean' } },
    async run(ctx, values) {
      // arguments first: a usage error opens (and creates) no database
      const port = values['port'] === undefined ? undefined : Number(values['port'])
      if (port !== undefined && !(/^\d+$/.test(String(values['port'])) && port <= 65535)) {
        throw new UsageError(`--port needs a port number (0 to 65535), got "${String(values['port'])}"`)
      }
      const { serve } = await import('../serve.ts')
      const { db, config } = ctx.open()
      if (values['host']) config.server.host = String(values['host'])
      if (port !== undefined) config.server.port = port
      const running = await serve(db, config, { schedules: !values['no-schedules'], log: (m) => ctx.io.err(m + '\n') })
      ctx.io.err(`dashboard: ${running.url}\n`)
      await running.closed
    },
  },
  map: {
    summary: 'show which skills a text or a JSON Lines file of postings maps to',
    usage: 'tides map [--text TEXT | FILE.jsonl] [--json] [--explain]',
    options: { text: { type: 'string' }, json: { type: 'boolean' }, explain: { type: 'boolean' } },
    async run(ctx, values, positionals) {
      const { runMapCommand } = await import('../taxonomy/map-command.ts')
      await runMapCommand(ctx, values, positionals)
    },
  },
}
