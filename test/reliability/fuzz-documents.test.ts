/**
 * Fuzzing the document imports (postings as JobPosting JSON Lines and RSS/Atom feeds, requests as
 * CSV and JSON Lines) and the feed parser with fast-check, seeded and bounded. The import rules
 * (src/ingest/import.ts): never crash; each bad line or row is reported with its line; a file with bad
 * lines stores nothing unless skip-bad is set, and then exactly the good ones land.
 * Good postings come from the benchmark corpus generator (bench/corpus.ts).
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import fc from 'fast-check'
import { afterAll, describe, expect, it } from 'vitest'
import { IMPORTERS, type ImportKind } from '../../src/commands/registry.ts'
import { loadConfig } from '../../src/config.ts'
import { contentHash, openDb } from '../../src/db/connection.ts'
import { readFeed } from '../../src/ingest/feed.ts'
import { formatProblem } from '../../src/util/csv.ts'
import { generatePostings } from '../../bench/corpus.ts'
import { smallTaxonomy } from './helpers.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-fuzzdoc-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))
const config = loadConfig({ db: ':memory:' })

/** JSON Lines of valid postings from the corpus generator (2 KB of text each). */
function corpusLines(n: number, seed: number): string[] {
  const chunks: Buffer[] = []
  generatePostings({ n, months: 6, seed, taxonomy: smallTaxonomy(), startMonth: '2023-01', repostRate: 0, nearRepostRate: 0 }, (b) => chunks.push(Buffer.from(b)))
  return Buffer.concat(chunks).toString('utf8').trimEnd().split('\n')
}
const GOOD = corpusLines(40, 11)

async function importFile(kind: ImportKind, file: string, skipBad: boolean) {
  const db = openDb(':memory:')
  const before = contentHash(db, ['documents', 'document_bands', 'events'])
  const result = await IMPORTERS[kind]!(db, config, file, { skipBad, log: () => {} })
  return { db, before, result }
}

// ---- postings: JSON Lines ------------------------------------------------------------------------

type LineCase = { bytes: Buffer; good: boolean; why: string }

const posting = (fields: Record<string, unknown>) => JSON.stringify({ '@context': 'https://schema.org', '@type': 'JobPosting', ...fields })

/** Lines the import must refuse (each a bad line), with what is wrong. */
const badPostingLine: fc.Arbitrary<LineCase> = fc.oneof(
  fc.tuple(fc.constantFrom(...GOOD), fc.double({ min: 0.05, max: 0.95, noNaN: true })).map(([l, r]) => ({ bytes: Buffer.from(l.slice(0, Math.floor(l.length * r))), good: false, why: 'truncated JSON' })),
  fc.constantFrom('[1,2]', '42', '"text"', 'null', 'true').map((t) => ({ bytes: Buffer.from(t), good: false, why: 'not an object' })),
  fc.constant({ bytes: Buffer.from(posting({ identifier: 'p-person', '@type': 'Person', name: 'x' })), good: false, why: 'not a JobPosting' }),
  fc.constantFrom('yesterday', '31/02/2024', '2024-13-45', '=NOW()').map((d) => ({ bytes: Buffer.from(posting({ identifier: `bad-date-${d}`, title: 'Analyst', description: 'SQL', datePosted: d })), good: false, why: 'bad date' })),
  fc.constant({ bytes: Buffer.from(posting({ identifier: 'p-future', title: 'Analyst', description: 'SQL', datePosted: '2099-01-01' })), good: false, why: 'date in the future' }),
  fc.constant({ bytes: Buffer.from(posting({ identifier: 'p-nodate', title: 'Analyst', description: 'SQL' })), good: false, why: 'no date' }),
  fc.constant({ bytes: Buffer.from(posting({ identifier: 'p-empty', title: '', description: '  ', datePosted: '2024-01-01' })), good: false, why: 'no text' }),
  fc.constant({ bytes: Buffer.from(posting({ identifier: 'p-long', title: 'T'.repeat(1001), description: 'SQL', datePosted: '2024-01-01' })), good: false, why: 'title too long' }),
  fc.constant({ bytes: Buffer.from(posting({ identifier: 'p-huge', title: 'Huge', description: 'x '.repeat(300_001), datePosted: '2024-01-01' })), good: false, why: 'description over ingest.maxTextChars' }),
  fc.tuple(fc.constantFrom(...GOOD), fc.nat(100)).map(([l, k]) => {
    const b = Buffer.from(l)
    const at = 20 + (k % Math.max(1, b.length - 40))
    return { bytes: Buffer.concat([b.subarray(0, at), Buffer.from([0xc3, 0x28, 0xff]), b.subarray(at)]), good: false, why: 'invalid UTF-8' }
  }),
)

/** Lines the import must keep: valid postings, also with hostile but harmless content. */
let uniqueGood = 0
const goodPostingLine: fc.Arbitrary<LineCase> = fc.oneof(
  { weight: 6, arbitrary: fc.constantFrom(...GOOD).map((l) => ({ bytes: Buffer.from(l), good: true, why: 'corpus posting' })) },
  {
    weight: 1,
    arbitrary: fc.constantFrom("=cmd|' /C calc'!A0", '+1+1', '@SUM(A1)', '-2+3').map((f) => ({
      bytes: Buffer.from(posting({ identifier: `${f}#${uniqueGood++}`, title: f, description: `${f} and Python`, datePosted: '2024-02-02' })),
      good: true,
      why: 'formula-like text is data',
    })),
  },
  {
    weight: 1,
    arbitrary: fc.integer({ min: 1000, max: 60_000 }).map((depth) => ({
      bytes: Buffer.from(`{"@type":"JobPosting","identifier":"deep-${uniqueGood++}","title":"Deep","description":"nested skills","datePosted":"2024-01-01","skills":${'['.repeat(depth)}${']'.repeat(depth)}}`),
      good: true,
      why: 'deeply nested arrays are ignored',
    })),
  },
  {
    weight: 1,
    arbitrary: fc.string({ unit: 'binary', minLength: 1, maxLength: 30 }).map((s) => ({
      bytes: Buffer.from(posting({ identifier: `ctl-${uniqueGood++}`, title: `Role ${s}`, description: `Text with \u0007 and ${s}`, datePosted: '2024-01-01' })),
      good: true,
      why: 'control and odd characters in text',
    })),
  },
)

describe('postings JSON Lines under fuzzing', () => {
  it('planted bad lines are reported by line; skip-bad keeps exactly the good ones; otherwise nothing is stored', async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(fc.oneof(goodPostingLine, badPostingLine), { minLength: 1, maxLength: 14 }), fc.boolean(), async (lines, crlf) => {
        // identifiers must be unique in a file for the count to hold: corpus lines may repeat
        const seen = new Set<string>()
        const kept = lines.filter((l) => {
          const key = l.bytes.toString('latin1')
          if (seen.has(key)) return false
          seen.add(key)
          return true
        })
        const file = path.join(tmp, 'postings.jsonl')
        fs.writeFileSync(file, Buffer.concat(kept.flatMap((l) => [l.bytes, Buffer.from(crlf ? '\r\n' : '\n')])))
        const badLines = kept.map((l, i) => (l.good ? 0 : i + 1)).filter(Boolean)
        const goodCount = kept.filter((l) => l.good).length

        const strict = await importFile('postings', file, false)
        const strictLines = [...new Set(strict.result.problems.map((p) => p.line))].sort((a, b) => a - b)
        expect(strictLines, kept.map((l) => l.why).join(', ')).toEqual(badLines)
        for (const p of strict.result.problems) expect(formatProblem(p)).toMatch(/postings\.jsonl:\d+: \S/)
        if (badLines.length) {
          expect(strict.result.refused).toBe(true)
          expect(contentHash(strict.db, ['documents', 'document_bands', 'events'])).toBe(strict.before)
        } else expect(strict.result.imported).toBe(goodCount)
        strict.db.close()

        const lenient = await importFile('postings', file, true)
        expect(lenient.result).toMatchObject({ refused: false, imported: goodCount, skipped: badLines.length })
        expect((lenient.db.prepare('SELECT COUNT(*) AS n FROM documents').get() as { n: number }).n).toBe(goodCount)
        lenient.db.close()
      }),
      { seed: 5150, numRuns: 40 },
    )
  })

  it('a file cut at any byte keeps every complete line before the cut', async () => {
    const text = GOOD.slice(0, 8).join('\n') + '\n'
    await fc.assert(
      fc.asyncProperty(fc.nat(text.length), async (cut) => {
        const file = path.join(tmp, 'cut.jsonl')
        fs.writeFileSync(file, text.slice(0, cut))
        const complete = text.slice(0, cut).split('\n').slice(0, -1).length
        const partial = text.slice(0, cut).split('\n').pop()!.length > 0
        const { db, result } = await importFile('postings', file, true)
        expect(result.imported).toBe(complete)
        expect(result.skipped).toBe(partial ? 1 : 0)
        db.close()
      }),
      { seed: 5151, numRuns: 25 },
    )
  })

  it('wrong encodings and binary files: refused or partly refused with a clear reason, never a crash', async () => {
    const text = GOOD.slice(0, 3).join('\n') + '\n'
    const variants: [string, Buffer, RegExp][] = [
      ['UTF-16LE with BOM', Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]), /not valid (UTF-8|JSON)/],
      ['UTF-16LE without BOM', Buffer.from(text, 'utf16le'), /not valid (UTF-8|JSON)|not a JSON object/],
      ['Latin-1', Buffer.from(text.replace(/e/g, 'é'), 'latin1'), /not valid UTF-8/],
      ['gzip bytes', Buffer.from([0x1f, 0x8b, 0x08, 0, 0, 0, 0, 0, 0, 3, 0x0a, 0xff, 0xfe, 0x00, 0x0a]), /not valid (UTF-8|JSON)/],
    ]
    for (const [name, bytes, reason] of variants) {
      const file = path.join(tmp, `enc.jsonl`)
      fs.writeFileSync(file, bytes)
      const { db, result } = await importFile('postings', file, true)
      expect(result.problems.length, name).toBeGreaterThan(0)
      expect(result.problems.map(formatProblem).join('\n'), name).toMatch(reason)
      expect(result.imported, name).toBe(0)
      db.close()
    }
  })

  it('random bytes with any extension: never a crash', async () => {
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 3000 }), fc.constantFrom('.jsonl', '.xml', '.rss', '.atom', '.txt'), async (bytes, ext) => {
        const file = path.join(tmp, `random${ext}`)
        fs.writeFileSync(file, bytes)
        const { db, result } = await importFile('postings', file, true)
        if (result.refused) expect(result.problems.length).toBeGreaterThan(0)
        db.close()
      }),
      { seed: 5152, numRuns: 80 },
    )
  })
})

// ---- requests: CSV and JSON Lines ----------------------------------------------------------------

const goodRequest = fc.record({
  timestamp: fc.date({ min: new Date('2019-01-01T00:00:00Z'), max: new Date('2025-12-31T00:00:00Z'), noInvalidDate: true }).map((d) => d.toISOString()),
  text: fc.oneof(fc.constantFrom('need training on Kubernetes', 'how do I write SQL window functions?', "=cmd|' /C calc'!A0", 'Excel, pivot tables, "advanced"', 'multi\nline request'), fc.string({ minLength: 1, maxLength: 40 }).filter((s) => /\S/.test(s) && !/[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffd]/.test(s))),
  channel: fc.constantFrom('portal', 'ticket', 'search', ''),
  team: fc.constantFrom('north', 'logistics', '', 'Zoë Ærø'),
})
const badRequest = fc.oneof(
  goodRequest.map((r) => ({ ...r, timestamp: 'last tuesday' })),
  goodRequest.map((r) => ({ ...r, timestamp: '2099-05-01' })),
  goodRequest.map((r) => ({ ...r, timestamp: '1970-01-01' })),
  goodRequest.map((r) => ({ ...r, text: '   ' })),
  goodRequest.map((r) => ({ ...r, timestamp: '' })),
)

function csvCell(v: string): string {
  return /[",\r\n]/.test(v) || /^\s|\s$/.test(v) ? `"${v.replace(/"/g, '""')}"` : v
}

describe('requests under fuzzing', () => {
  for (const format of ['csv', 'jsonl'] as const) {
    it(`${format}: planted bad rows by line; skip-bad keeps exactly the good ones`, async () => {
      await fc.assert(
        fc.asyncProperty(fc.array(fc.oneof(goodRequest.map((r) => ({ r, good: true })), badRequest.map((r) => ({ r, good: false }))), { minLength: 1, maxLength: 15 }), async (rows) => {
          // identical good requests are one request (same time, text, channel, team): keep them apart
          rows.forEach((x, i) => (x.r.text = x.r.text.trim() ? `${x.r.text} #${i}` : x.r.text))
          let line = format === 'csv' ? 2 : 1
          const starts: number[] = []
          const body = rows.map(({ r }) => {
            const text = format === 'csv' ? [r.timestamp, r.text, r.channel, r.team].map(csvCell).join(',') : JSON.stringify(r)
            starts.push(line)
            line += text.split('\n').length
            return text
          })
          const file = path.join(tmp, `requests.${format}`)
          fs.writeFileSync(file, (format === 'csv' ? 'timestamp,text,channel,team\n' : '') + body.join('\n') + '\n')
          const badLines = rows.map((x, i) => (x.good ? 0 : starts[i]!)).filter(Boolean)
          const good = rows.filter((x) => x.good).length
          const { db, result } = await importFile('requests', file, true)
          expect([...new Set(result.problems.filter((p) => p.line > 0).map((p) => p.line))].sort((a, b) => a - b)).toEqual(badLines)
          expect(result).toMatchObject({ refused: false, imported: good, skipped: badLines.length })
          db.close()
        }),
        { seed: 6160 + (format === 'csv' ? 0 : 1), numRuns: 40 },
      )
    })
  }
})

// ---- feeds ----------------------------------------------------------------------------------------

function rssFeed(n: number): { xml: string; guids: string[] } {
  const guids = Array.from({ length: n }, (_, i) => `urn:fernhollow:job:${i}`)
  const items = guids.map(
    (g, i) =>
      `  <item>\n    <guid>${g}</guid>\n    <title>Data Engineer ${i}</title>\n    <description>&lt;p&gt;Python, SQL and Kubernetes for the depot team ${i}&lt;/p&gt;</description>\n    <pubDate>Tue, 0${1 + (i % 9)} Apr 2025 09:00:00 GMT</pubDate>\n  </item>`,
  )
  return { xml: `<?xml version="1.0" encoding="UTF-8"?>\n<rss version="2.0">\n<channel>\n  <title>Fernhollow jobs</title>\n${items.join('\n')}\n</channel>\n</rss>\n`, guids }
}

describe('feed parser under fuzzing', () => {
  const { xml, guids } = rssFeed(8)

  it('a feed cut at any byte keeps every item that ended before the cut', async () => {
    await fc.assert(
      fc.asyncProperty(fc.nat(xml.length), async (cut) => {
        const body = xml.slice(0, cut)
        const r = await readFeed(body, 'cut.xml', '2025-04-20T00:00:00Z')
        const ended = guids.filter((g) => {
          const close = xml.indexOf('</item>', xml.indexOf(g))
          return close + '</item>'.length <= cut
        })
        const got = r.items.map((i) => i.doc.externalId)
        for (const g of ended) expect(got.some((id) => id.includes(g)), `item ${g} lost at cut ${cut}`).toBe(true)
        expect(r.items.length).toBeLessThanOrEqual(guids.length)
      }),
      { seed: 7170, numRuns: 60 },
    )
  })

  it('mutated feeds (spliced garbage, entities, deep nesting, odd characters): never a crash, good items kept', async () => {
    const splices = fc.constantFrom(
      '<',
      '&',
      '&undefined;',
      ']]>',
      '<![CDATA[',
      '<!DOCTYPE x [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>',
      '<!ENTITY xxe SYSTEM "file:///etc/passwd">',
      '\u0000',
      '\uFFFE',
      '<a>'.repeat(2000),
      '</item>',
      '<item>',
      '"\'',
    )
    await fc.assert(
      fc.asyncProperty(fc.array(fc.tuple(fc.nat(xml.length), splices), { minLength: 1, maxLength: 4 }), async (edits) => {
        let body = xml
        for (const [at, s] of [...edits].sort((a, b) => b[0] - a[0])) body = body.slice(0, at) + s + body.slice(at)
        const r = await readFeed(body, 'mutated.xml', '2025-04-20T00:00:00Z')
        expect(r.items.length).toBeLessThanOrEqual(guids.length + 2)
        // items whose text no edit touched survive
        const touched = (g: string) => {
          const start = xml.lastIndexOf('<item>', xml.indexOf(g))
          const end = xml.indexOf('</item>', start) + 7
          return edits.some(([at]) => at >= start - 1 && at <= end + 1)
        }
        if (r.fatal === null && !edits.some(([at, s]) => s.startsWith('<!DOCTYPE') || at < xml.indexOf('<item>'))) {
          const got = r.items.map((i) => i.doc.externalId)
          for (const g of guids.filter((g) => !touched(g))) expect(got.some((id) => id.includes(g)), `untouched item ${g} lost`).toBe(true)
        }
        for (const i of r.items) expect(i.doc.body + i.doc.title).not.toMatch(/root:x:0:0/)
      }),
      { seed: 7171, numRuns: 80 },
    )
  })

  it('random text: never a crash, and a non-feed is refused with a reason', async () => {
    await fc.assert(
      fc.asyncProperty(fc.string({ unit: 'binary', maxLength: 500 }), async (text) => {
        const r = await readFeed(text, 'random.xml', '2025-04-20T00:00:00Z')
        if (r.items.length === 0) expect(r.fatal ?? r.problems.map((p) => p.reason).join(' ')).toMatch(/\S/)
      }),
      { seed: 7172, numRuns: 150 },
    )
  })
})

describe('every registered importer survives random input', () => {
  const extensions: Partial<Record<ImportKind, string[]>> = { postings: ['.jsonl', '.xml'], requests: ['.csv', '.jsonl'], taxonomy: ['.csv', '.ttl'] }
  for (const kind of Object.keys(IMPORTERS) as ImportKind[]) {
    it(`${kind}: random bytes and text give a result, never an exception`, async () => {
      await fc.assert(
        fc.asyncProperty(fc.oneof(fc.uint8Array({ maxLength: 1500 }), fc.string({ unit: 'grapheme', maxLength: 400 }).map((s) => Buffer.from(s))), fc.nat(), async (bytes, pick) => {
          const exts = extensions[kind] ?? ['.csv']
          const file = path.join(tmp, `any-${kind}${exts[pick % exts.length]}`)
          fs.writeFileSync(file, bytes)
          const { db, result } = await importFile(kind, file, pick % 2 === 0)
          expect(result.read).toBeGreaterThanOrEqual(0)
          if (result.refused) expect(result.problems.length).toBeGreaterThan(0)
          db.close()
        }),
        { seed: 8180 + kind.length, numRuns: 30 },
      )
    })
  }
})
