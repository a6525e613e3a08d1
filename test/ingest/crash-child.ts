/**
 * Child process of the kill-and-restart test: ingests one JSON Lines source into a database file
 * and prints "ready" just before it starts, so the parent can time its SIGKILL.
 * Usage: node --import tsx test/ingest/crash-child.ts DB FILE
 */
import { parseConfig } from '../../src/config.ts'
import { openDb } from '../../src/db/connection.ts'
import { closeAbandonedRuns } from '../../src/db/runs.ts'
import { ingestSources } from '../../src/ingest/stage.ts'

const [dbFile, file] = process.argv.slice(2)
const db = openDb(dbFile!)
closeAbandonedRuns(db)
const config = parseConfig({ ingest: { batchSize: 200 }, sources: [{ id: 'big', kind: 'jsonl', location: file! }] })
process.stdout.write('ready\n')
const [report] = await ingestSources(db, config, { trigger: 'test' })
process.stdout.write(`done ${JSON.stringify(report!.counts)}\n`)
db.close()
