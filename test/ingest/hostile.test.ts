import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { createRequire } from 'node:module'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { openDb } from '../../src/db/connection.ts'
import { listRuns } from '../../src/db/runs.ts'
import { readFeed } from '../../src/ingest/feed.ts'
import { ingestSources } from '../../src/ingest/stage.ts'
import { startServer, type TestServer } from './server.ts'

// xml2js ships no types; only its Parser is needed, to check a fact about it independently
const xml2js = createRequire(import.meta.url)('xml2js') as { Parser: new () => { parseStringPromise(xml: string): Promise<unknown> } }

let server: TestServer
let dir: string
beforeAll(async () => {
  server = await startServer({ '/dtd': (_q, res) => void res.writeHead(200).end('<!ENTITY x "fetched">'), '/secret': (_q, res) => void res.writeHead(200).end('secret') })
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-hostile-'))
})
afterAll(async () => {
  await server.close()
  fs.rmSync(dir, { recursive: true, force: true })
})

const NOW = '2024-05-01T00:00:00.000Z'
const item = (id: string, title: string) => `<item><guid>${id}</guid><title>${title}</title><description>Text of ${id} at the Fernhollow depot.</description><pubDate>Mon, 01 May 2023 10:00:00 GMT</pubDate></item>`

function write(name: string, content: string | Buffer): string {
  const file = path.join(dir, name)
  fs.writeFileSync(file, content)
  return file
}

async function ingestFile(kind: 'feed' | 'jsonl' | 'requests', file: string) {
  const db = openDb(':memory:')
  const [report] = await ingestSources(db, parseConfig({ sources: [{ id: 's', kind, location: file }] }))
  const run = listRuns(db, 1)[0]!
  const docs = db.prepare('SELECT external_id, title, body FROM documents ORDER BY id').all() as { external_id: string; title: string; body: string }[]
  return { db, report: report!, run, details: JSON.parse(run.details_json) as { problems: { line?: number; field?: string; reason: string }[] }, docs }
}

describe('entity expansion and external entities', () => {
  const bomb = () => `<?xml version="1.0"?>
<!DOCTYPE rss [
  <!ENTITY lol "lol">
  <!ENTITY lol1 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">
  <!ENTITY lol2 "&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;">
  <!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">
  <!ENTITY lol9 "&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;">
  <!ENTITY xxe SYSTEM "${server.url('/secret')}">
  <!ENTITY % remote SYSTEM "${server.url('/dtd')}">
  %remote;
]>
<rss version="2.0"><channel><title>t</title>
${item('good-1', 'Baker')}
${item('bomb', '&lol9;')}
${item('xxe', 'Leak &xxe;')}
${item('good-2', 'Courier')}
</channel></rss>`

  it('xml2js (under rss-parser) refuses undeclared entities by itself: checked as an independent fact', async () => {
    await expect(new xml2js.Parser().parseStringPromise('<a>&lol9;</a>')).rejects.toThrow(/Invalid character entity/)
  })

  it('billion laughs and XXE: nothing expanded, nothing fetched, the good items land, the reason is on the run', async () => {
    const before = server.seen.length
    const { report, docs, details } = await ingestFile('feed', write('bomb.xml', bomb()))
    expect(server.seen.length).toBe(before) // neither the external entity nor the external DTD was fetched
    expect(docs.map((d) => d.external_id)).toEqual(['good-1', 'good-2'])
    expect(docs.every((d) => !d.title.includes('lol') && !d.title.includes('secret'))).toBe(true)
    expect(report.status).toBe('partial')
    expect(report.counts).toMatchObject({ new: 2, rejected: 2 })
    const reasons = details.problems.map((p) => p.reason).join('\n')
    expect(reasons).toMatch(/DOCTYPE declares entities; it was removed unexpanded/)
    expect(details.problems.filter((p) => /not well-formed XML: Invalid character entity/.test(p.reason)).map((p) => p.line)).toEqual([14, 15])
  })

  it('a truncated DOCTYPE (unterminated internal subset) expands nothing and reads nothing after it', async () => {
    const feed = await readFeed(`<?xml version="1.0"?>\n<!DOCTYPE x [\n<!ENTITY a "${'b'.repeat(1000)}">\n<rss version="2.0"><channel>${item('i', '&a;')}</channel></rss>`, 't.xml', NOW)
    expect(feed.items).toEqual([])
    expect(feed.fatal).toMatch(/not an RSS or Atom feed/)
  })
})

describe('malformed input keeps the good items', () => {
  it('a broken item costs that item only (line and reason recorded)', async () => {
    const xml = `<?xml version="1.0"?>\n<rss version="2.0"><channel><title>t</title>\n${item('a', 'One')}\n<item><guid>b</guid><title>Two & three</title></item>\n${item('c', 'Four')}\n<item><guid>d</guid><title>Unclosed <b>bold</title></item>\n${item('e', 'Five')}\n</channel></rss>`
    const { docs, details, report } = await ingestFile('feed', write('broken.xml', xml))
    expect(docs.map((d) => d.external_id)).toEqual(['a', 'c', 'e'])
    expect(report.counts.rejected).toBe(2)
    expect(details.problems.filter((p) => !/items were read one by one/.test(p.reason)).map((p) => p.line)).toEqual([4, 6])
  })

  it('not a feed at all, and an empty body, fail with the reason', async () => {
    expect((await ingestFile('feed', write('plain.xml', 'just some text'))).report.error).toMatch(/not an RSS or Atom feed/)
    expect((await ingestFile('feed', write('json.xml', '{"items": []}'))).report.error).toMatch(/not an RSS or Atom feed/)
  })

  it('invalid UTF-8 in a feed rejects the items that contain it; the rest land', async () => {
    const head = Buffer.from(`<?xml version="1.0" encoding="utf-8"?>\n<rss version="2.0"><channel><title>t</title>\n${item('ok-1', 'Good')}\n<item><guid>bad</guid><title>Caf`)
    const bad = Buffer.from([0xc3, 0x28]) // 0xC3 must be followed by a continuation byte
    const tail = Buffer.from(`</title><description>x</description></item>\n${item('ok-2', 'Fine')}\n</channel></rss>`)
    const { docs, details } = await ingestFile('feed', write('utf8.xml', Buffer.concat([head, bad, tail])))
    expect(docs.map((d) => d.external_id)).toEqual(['ok-1', 'ok-2'])
    expect(details.problems.some((p) => p.line === 4 && /not valid UTF-8 \(first bad byte of the body at \d+\)/.test(p.reason))).toBe(true)
  })

  it('a feed in ISO-8859-1 (declared in the XML declaration) is decoded, not rejected', async () => {
    const xml = `<?xml version="1.0" encoding="ISO-8859-1"?>\n<rss version="2.0"><channel><title>t</title>${item('l1', 'Crème brûlée chef')}</channel></rss>`
    const { docs } = await ingestFile('feed', write('latin1.xml', Buffer.from(xml, 'latin1')))
    expect(docs[0]!.title).toBe('Crème brûlée chef')
  })
})

describe('JobPosting JSON Lines and request logs', () => {
  it('bad lines are rejected with line and field, good lines land', async () => {
    const lines = [
      JSON.stringify({ '@type': 'JobPosting', identifier: 'j1', title: 'Baker', description: 'Bread.', datePosted: '2023-02-01' }),
      '{"@type": "JobPosting", "identifier": "j2", "title": ',
      JSON.stringify({ '@type': 'JobPosting', identifier: 'j3', title: 'Driver', description: 'Vans.', datePosted: '2023-02-30' }),
      JSON.stringify({ '@type': 'Organization', name: 'Fernhollow' }),
      JSON.stringify({ '@type': 'JobPosting', identifier: 'j5', title: 'x'.repeat(2000), description: 'Long title.', datePosted: '2023-02-01' }),
      JSON.stringify({ '@type': 'JobPosting', identifier: 'j6', title: { nested: true }, datePosted: '2023-02-01' }),
      '['.repeat(100_000) + ']'.repeat(100_000),
      JSON.stringify({ '@type': 'JobPosting', identifier: 'j8', title: 'Picker', description: 'Apples.', datePosted: '2023-03-01' }),
    ]
    const bytes = Buffer.concat([Buffer.from(lines.join('\n') + '\n'), Buffer.from([0xff, 0xfe, 0x0a]), Buffer.from(lines[0]!.replace('j1', 'j10') + '\n')])
    const { docs, details, report } = await ingestFile('jsonl', write('postings.jsonl', bytes))
    expect(docs.map((d) => d.external_id)).toEqual(['j1', 'j8', 'j10'])
    expect(report.counts).toMatchObject({ read: 10, new: 2, duplicate: 1, rejected: 7 })
    const byLine = Object.fromEntries(details.problems.map((p) => [p.line, `${p.field ?? ''}: ${p.reason}`]))
    expect(byLine[2]).toMatch(/not valid JSON/)
    expect(byLine[3]).toMatch(/^datePosted: .*not a calendar date/)
    expect(byLine[4]).toMatch(/^@type: is Organization, not JobPosting/)
    expect(byLine[5]).toMatch(/^title: is longer than 1000 characters/)
    expect(byLine[6]).toMatch(/^title: is not text/)
    expect(byLine[7]).toMatch(/not a JSON object/)
    expect(byLine[9]).toMatch(/not valid UTF-8 \(byte \d+\)/)
  })

  it('a request CSV with a missing required column is refused with the header it has', async () => {
    const { report, docs } = await ingestFile('requests', write('requests.csv', 'timestamp,channel,team\n2023-01-01T09:00:00Z,portal,north\n'))
    expect(report.status).toBe('failed')
    expect(report.error).toMatch(/requests\.csv:1: column text: missing required column\(s\); header has: timestamp, channel, team/)
    expect(docs).toEqual([])
  })

  it('request CSV rows: bad timestamps and empty texts are rejected by line, the rest land', async () => {
    const csv = 'timestamp,text,channel,team\n2023-01-01T09:00:00Z,Need Excel pivot tables,portal,north\nlast tuesday,Python course,portal,south\n2023-01-02,,helpdesk,east\n2023-01-03,"Kubernetes, please",helpdesk,\n'
    const { report, details, docs } = await ingestFile('requests', write('log.csv', csv))
    expect(docs.map((d) => d.body)).toEqual(['Need Excel pivot tables', 'Kubernetes, please'])
    expect(report.counts).toMatchObject({ read: 4, new: 2, rejected: 2 })
    expect(details.problems.map((p) => [p.line, p.field])).toEqual([
      [3, 'timestamp'],
      [4, 'text'],
    ])
  })
})
