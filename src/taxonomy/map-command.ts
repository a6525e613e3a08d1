/**
 * @module taxonomy/map-command
 * `tides map --text "..."` and `tides map FILE.jsonl`: print, per document, the matched concept
 * ids and labels with their spans (and, with --explain, what the rules turned down), for people
 * tuning their taxonomy. Uses the database's taxonomy when it has one, else the shipped one.
 * `--json` prints one JSON document: an object for --text, an array for a file.
 */
import { CliError, UsageError, type CommandContext } from '../cli.ts'
import { mappingJson, mappingText, matcherForCommand, readPostingLines } from './commands.ts'
import { readFailure } from '../errors.ts'

export async function runMapCommand(ctx: CommandContext, values: Record<string, unknown>, positionals: string[]): Promise<void> {
  const text = values['text']
  const json = Boolean(values['json'])
  const explain = Boolean(values['explain'])
  if (typeof text === 'string' && positionals.length > 0) throw new UsageError('give either --text or a FILE, not both')
  if (typeof text !== 'string' && positionals.length !== 1) throw new UsageError('map needs --text TEXT or one FILE.jsonl')
  const { db } = ctx.open()
  const { matcher, taxonomy } = matcherForCommand(db)
  if (typeof text === 'string') {
    const doc = mappingJson(matcher.map({ text }, { explain }))
    ctx.io.out(json ? JSON.stringify({ taxonomy, ...doc }, null, 2) + '\n' : mappingText(doc))
    return
  }
  const file = positionals[0]!
  let read: ReturnType<typeof readPostingLines>
  try {
    read = readPostingLines(file)
  } catch (err) {
    throw new CliError(`${file}: cannot read: ${readFailure(err)}`)
  }
  for (const p of read.problems) ctx.io.err(`${p.file}:${p.line}: ${p.reason}\n`)
  const docs = read.docs.map((d) =>
    mappingJson(matcher.map(d.input, { explain }), { line: d.line, ...(d.id !== undefined ? { id: d.id } : {}), ...(d.title ? { title: d.title } : {}) }),
  )
  if (json) ctx.io.out(JSON.stringify(docs, null, 2) + '\n')
  else for (const d of docs) ctx.io.out(mappingText(d))
  if (read.docs.length === 0 && read.problems.length > 0) throw new CliError(`${file}: no postings could be read`)
}
