/**
 * The demo is a pure function of its parameters: the same seed and as-of date give byte-identical
 * files and, after loading the CSV kinds through the real importers, the same database content hash;
 * another seed gives other files and another hash. runDemo registers the sources and does not
 * regenerate or re-import what is already there.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { parseConfig } from '../../src/config.ts'
import { contentHash, getSetting, openDb } from '../../src/db/connection.ts'
import { DEMO_TABLES, DemoError, generateDemo, type DemoManifest, type DemoParams } from '../../src/demo/generate.ts'
import { importDemoTables, resolveParams, runDemo } from '../../src/demo/load.ts'

const PARAMS: DemoParams = { seed: 5, months: 36, perMonth: 60, asOf: '2025-06-15', people: 300, feedPageSize: 300 }
const dirs: string[] = []

function tmpDir(): string {
  const d = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-demo-'))
  dirs.push(d)
  return d
}

afterAll(() => {
  for (const d of dirs) fs.rmSync(d, { recursive: true, force: true })
})

/** sha256 of every file under the folder, by relative path. */
function hashFiles(root: string): Record<string, string> {
  const out: Record<string, string> = {}
  const walk = (dir: string) => {
    for (const e of fs.readdirSync(dir, { withFileTypes: true }).sort((a, b) => (a.name < b.name ? -1 : 1))) {
      const full = path.join(dir, e.name)
      if (e.isDirectory()) walk(full)
      else out[path.relative(root, full)] = crypto.createHash('sha256').update(fs.readFileSync(full)).digest('hex')
    }
  }
  walk(root)
  return out
}

async function loadTables(dataDir: string, manifest: DemoManifest): Promise<string> {
  const db = openDb(':memory:')
  try {
    const config = parseConfig({ dataDir })
    const counts = await importDemoTables(db, config, manifest, () => {})
    for (const kind of DEMO_TABLES) expect(counts[kind], kind).toBeGreaterThan(0)
    return contentHash(db)
  } finally {
    db.close()
  }
}

describe('demo determinism', () => {
  const a = tmpDir()
  const b = tmpDir()
  const c = tmpDir()
  const ma = generateDemo(a, PARAMS)
  const mb = generateDemo(b, PARAMS)
  const mc = generateDemo(c, { ...PARAMS, seed: 6 })

  it('writes byte-identical files for the same seed and as-of date', () => {
    const ha = hashFiles(a)
    expect(Object.keys(ha).length).toBeGreaterThanOrEqual(15)
    expect(hashFiles(b)).toEqual(ha)
    expect(mb).toEqual(ma)
  })

  it('writes different files for another seed', () => {
    const ha = hashFiles(a)
    const hc = hashFiles(c)
    for (const f of ['demo/postings-openroles.jsonl', 'demo/requests.csv', 'demo/responses.csv', 'demo/courses.csv', 'feeds/thistledown.rss']) {
      expect(hc[f], f).toBeDefined()
      expect(hc[f], f).not.toBe(ha[f])
    }
  })

  it('gives the same database content hash after loading the CSV kinds, and another for another seed', async () => {
    const hashA = await loadTables(a, ma)
    expect(await loadTables(b, mb)).toBe(hashA)
    expect(await loadTables(c, mc)).not.toBe(hashA)
  })

  it('ends the postings in the as-of month and covers the requested months', () => {
    const truth = JSON.parse(fs.readFileSync(path.join(a, ma.truth), 'utf8')) as { postings: { months: string[] } }
    expect(truth.postings.months.length).toBe(36)
    expect(truth.postings.months[0]).toBe('2022-07')
    expect(truth.postings.months[35]).toBe('2025-06')
  })

  it('refuses impossible parameters with a message naming them', () => {
    expect(() => generateDemo(tmpDir(), { ...PARAMS, perMonth: 0 })).toThrow(DemoError)
    expect(() => generateDemo(tmpDir(), { ...PARAMS, perMonth: 0 })).toThrow(/perMonth must be a positive whole number/)
    expect(() => generateDemo(tmpDir(), { ...PARAMS, months: 6 })).toThrow(/months must be at least 12/)
    expect(() => generateDemo(tmpDir(), { ...PARAMS, asOf: '2025-02-30' })).toThrow(/not a calendar date/)
    expect(() => generateDemo(tmpDir(), { ...PARAMS, asOf: 'June 2025' })).toThrow(/not YYYY-MM-DD/)
    const db = openDb(':memory:')
    expect(() => resolveParams(db, { months: 3 })).toThrow(/months must be at least 12/)
    expect(resolveParams(db, { seed: 9, asOf: '2024-01-31' })).toMatchObject({ seed: 9, months: 36, perMonth: 2000, asOf: '2024-01-31', people: 3000 })
    db.close()
  })

  it('stops with the file, line and column when a demo file does not import', async () => {
    const dir = tmpDir()
    const m = generateDemo(dir, PARAMS)
    const file = path.join(dir, m.tables.responses)
    fs.appendFileSync(file, 'fh-00001,python-01,2,2025-01-01T00:00:00Z\r\n')
    const db = openDb(':memory:')
    try {
      const err = await importDemoTables(db, parseConfig({ dataDir: dir }), m, () => {}).catch((e: unknown) => e)
      expect(err).toBeInstanceOf(DemoError)
      expect(String((err as Error).message)).toMatch(/responses did not import .*responses\.csv:\d+: column response/)
    } finally {
      db.close()
    }
  })
})

describe('runDemo', () => {
  it('registers feed sources on the server URL, imports once, and reuses files on the next start', async () => {
    const dataDir = tmpDir()
    const config = parseConfig({ dataDir, db: path.join(dataDir, 'tides.db') })
    const db = openDb(config.db)
    try {
      const lines: string[] = []
      const opts = { seed: 5, months: 36, perMonth: 60, people: 300, asOf: '2025-06-15', run: false, baseUrl: 'http://127.0.0.1:4780/', log: (m: string) => lines.push(m) }
      await runDemo(db, config, opts)
      expect(getSetting(db, 'demo.seed')).toBe('5')
      const feed = config.sources.find((s) => s.id === 'demo-thistledown')!
      expect(feed).toMatchObject({ kind: 'feed', location: 'http://127.0.0.1:4780/feeds/thistledown.rss' })
      expect(feed.schedule).toBeDefined()
      for (const s of config.sources.filter((x) => x.kind !== 'feed')) expect(fs.existsSync(s.location), s.location).toBe(true)
      expect(config.sources.map((s) => s.kind).sort()).toEqual(expect.arrayContaining(['feed', 'jsonl', 'requests']))
      expect(lines.some((l) => l.startsWith('demo: imported'))).toBe(true)
      const hash = contentHash(db)
      const sourceCount = config.sources.length

      // the next start (as main.ts does it): no options, stored parameters, nothing regenerated or re-imported
      lines.length = 0
      const mtime = fs.statSync(path.join(dataDir, 'demo/responses.csv')).mtimeMs
      await runDemo(db, config, { run: false, baseUrl: 'http://127.0.0.1:4999/', log: (m) => lines.push(m) })
      expect(lines.some((l) => l.includes('already in'))).toBe(true)
      expect(lines.some((l) => l.startsWith('demo: imported'))).toBe(false)
      expect(fs.statSync(path.join(dataDir, 'demo/responses.csv')).mtimeMs).toBe(mtime)
      expect(contentHash(db)).toBe(hash)
      expect(config.sources.length).toBe(sourceCount)
      expect(config.sources.find((s) => s.id === 'demo-thistledown')!.location).toBe('http://127.0.0.1:4999/feeds/thistledown.rss')

      // without a server the feeds are read from their files
      const local = parseConfig({ dataDir })
      await runDemo(db, local, { run: false, log: () => {} })
      expect(local.sources.find((s) => s.id === 'demo-thistledown')!.location).toBe(path.join(dataDir, 'feeds/thistledown.rss'))
    } finally {
      db.close()
    }
  })
})
