/**
 * @module commands/extra
 * `serve` and `map`: the long-running server with its schedules, and the taxonomy tuning command.
 */
import type { Command } from '../cli.ts'
import { NotBuiltError } from '../stage.ts'

export const COMMANDS: Record<string, Command> = {
  serve: {
    summary: 'run the dashboard and API, and the scheduled jobs',
    usage: 'tides serve [--host HOST] [--port PORT] [--no-schedules]',
    options: { host: { type: 'string' }, port: { type: 'string' }, 'no-schedules': { type: 'boolean' } },
    async run(ctx, values) {
      const { serve } = await import('../serve.ts')
      const { db, config } = ctx.open()
      if (values['host']) config.server.host = String(values['host'])
      if (values['port']) {
        const port = Number(values['port'])
        if (!Number.isInteger(port) || port < 0 || port > 65535) throw new NotBuiltError(`--port needs a port number, got "${String(values['port'])}"`)
        config.server.port = port
      }
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
