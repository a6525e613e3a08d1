/**
 * Large hostile inputs that are too slow for `npm test`: a feed at the size limit with 100,000 items,
 * well-formed and with one broken item (recovery reads the rest item by item), and a JSON Lines file
 * with a line over the 16 MiB line limit between good lines. No hang (the test timeout is the bound),
 * a clear reason, and the good items kept.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { loadConfig } from '../../src/config.ts'
import { openDb } from '../../src/db/connection.ts'
import { readFeed } from '../../src/ingest/feed.ts'
import { importDocuments } from '../../src/ingest/import.ts'
import { formatProblem } from '../../src/util/csv.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-big-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))

function bigFeed(n: number): string {
  const items: string[] = []
  for (let i = 0; i < n; i++) {
    items.push(`<item>\n<guid>urn:fh:big:${i}</guid>\n<title>Depot analyst ${i}</title>\n<description>SQL, Python and route planning for depot ${i % 97}</description>\n<pubDate>Tue, 01 Apr 2025 09:00:00 GMT</pubDate>\n</item>`)
  }
  return `<?xml version="1.0"?>\n<rss version="2.0"><channel><title>big</title>\n${items.join('\n')}\n</channel></rss>\n`
}

describe('large inputs', () => {
  it('a 100,000-item feed is read whole; with one broken item, the other 99,999 are kept', { timeout: 600_000 }, async () => {
    const xml = bigFeed(100_000)
    expect(xml.length).toBeGreaterThan(15e6)
    const t0 = performance.now()
    const whole = await readFeed(xml, 'big.xml', '2025-04-20T00:00:00Z')
    expect(whole.items).toHaveLength(100_000)
    const broken = xml.replace('<title>Depot analyst 500</title>', '<title>Depot & analyst 500</title>')
    const r = await readFeed(broken, 'big.xml', '2025-04-20T00:00:00Z')
    expect(r.items).toHaveLength(99_999)
    expect(r.problems.filter((p) => !p.warning).map((p) => p.line)).toEqual([whole.items[500]!.line])
    process.stderr.write(`big feed: ${(xml.length / 1e6).toFixed(1)} MB x2 in ${((performance.now() - t0) / 1000).toFixed(1)} s\n`)
  })

  it('a JSON Lines file with a 17 MiB line: that line refused, the others imported', { timeout: 600_000 }, async () => {
    const file = path.join(tmp, 'long-line.jsonl')
    const good = (i: number) => JSON.stringify({ '@type': 'JobPosting', identifier: `g${i}`, title: `Analyst ${i}`, description: `SQL and Python ${i}`, datePosted: '2024-02-01' })
    const fd = fs.openSync(file, 'w')
    fs.writeSync(fd, good(1) + '\n')
    fs.writeSync(fd, `{"@type":"JobPosting","identifier":"huge","title":"x","datePosted":"2024-02-01","description":"`)
    const block = Buffer.alloc(1 << 20, 0x61)
    for (let i = 0; i < 17; i++) fs.writeSync(fd, block)
    fs.writeSync(fd, '"}\n' + good(2) + '\n')
    fs.closeSync(fd)
    const db = openDb(':memory:')
    const r = await importDocuments(db, loadConfig({ db: ':memory:' }), 'postings', file, { skipBad: true })
    expect(r).toMatchObject({ refused: false, imported: 2, skipped: 1 })
    expect(r.problems.map(formatProblem)).toHaveLength(1)
    expect(formatProblem(r.problems[0]!)).toMatch(/:2: (line is too long|column description: is longer than \d+ characters)/)
    db.close()
  })
})
