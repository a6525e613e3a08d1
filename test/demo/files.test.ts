/**
 * The demo's files are what real sources publish: RSS 2.0 and Atom that an independent parser
 * (rss-parser, on xml2js) reads item for item, embedded schema.org JobPosting JSON-LD, JSON Lines of
 * JobPosting objects, and the feeds served over HTTP by the dashboard server's /feeds/ route.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { Hono } from 'hono'
import Parser from 'rss-parser'
import { afterAll, describe, expect, it } from 'vitest'
import { parse } from 'csv-parse/sync'
import { generateDemo } from '../../src/demo/generate.ts'
import { demoMonths } from '../../src/demo/calendar.ts'
import { ROLES } from '../../src/demo/org.ts'
import { generatePostings } from '../../src/demo/postings.ts'
import { jobPostingJson, jobPostingObject } from '../../src/demo/writers.ts'
import { mountFeeds } from '../../src/server/feeds.ts'

const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-demo-files-'))
afterAll(() => fs.rmSync(dataDir, { recursive: true, force: true }))
const manifest = generateDemo(dataDir, { seed: 8, months: 36, perMonth: 80, asOf: '2025-06-15', people: 200, feedPageSize: 250 })
const roleNames = new Set(ROLES.map((r) => r.name))
const parseCsv = (file: string) => parse(fs.readFileSync(file, 'utf8'), { columns: true }) as Record<string, string>[]

describe('demo feed files', () => {
  // rss-parser leaves Atom's <category term="..."/> out of `categories`; the raw element is asked for by name
  const parser = new Parser({ customFields: { item: [['content:encoded', 'contentEncoded'], ['category', 'atomCategory']] } })

  it('parse as RSS 2.0 and Atom, newest first, with every item the manifest counts', async () => {
    expect(manifest.feeds.some((f) => !f.current)).toBe(true)
    let items = 0
    for (const f of manifest.feeds) {
      const feed = await parser.parseString(fs.readFileSync(path.join(dataDir, f.file), 'utf8'))
      expect(feed.items.length, f.file).toBe(f.items)
      items += f.items
      const dates = feed.items.map((i) => Date.parse(i.isoDate!))
      for (let i = 1; i < dates.length; i++) expect(dates[i]!, f.file).toBeLessThanOrEqual(dates[i - 1]!)
      for (const item of feed.items) {
        expect(item.title, f.file).toBeTruthy()
        expect(item.guid ?? (item as { id?: string }).id, f.file).toBeTruthy()
        expect(Date.parse(item.isoDate!)).toBeLessThanOrEqual(Date.parse('2025-06-15T23:59:59Z'))
        const atom = (item as { atomCategory?: { $?: { term?: string } } }).atomCategory?.$?.term
        const category = f.format === 'atom' ? atom : item.categories?.[0]
        expect(roleNames.has(category as string), `${f.file}: ${String(category)}`).toBe(true)
      }
    }
    const jsonl = manifest.jsonl.reduce((a, j) => a + j.postings, 0)
    expect(items + jsonl).toBe(manifest.counts.postings + manifest.counts.reposts)
    // about a quarter of the postings are published as feeds
    expect(items / (items + jsonl)).toBeGreaterThan(0.18)
    expect(items / (items + jsonl)).toBeLessThan(0.32)
  })

  it('embed schema.org JobPosting JSON-LD in most items of the JSON-LD board', async () => {
    const f = manifest.feeds.find((x) => x.format === 'rss-jsonld' && x.current)!
    const feed = await parser.parseString(fs.readFileSync(path.join(dataDir, f.file), 'utf8'))
    let embedded = 0
    for (const item of feed.items as ({ contentEncoded?: string } & Parser.Item)[]) {
      const m = /<script type="application\/ld\+json">(.*?)<\/script>/s.exec(item.contentEncoded ?? '')
      if (!m) continue
      embedded++
      const obj = JSON.parse(m[1]!) as Record<string, unknown>
      expect(obj['@type']).toBe('JobPosting')
      expect(obj['identifier']).toBe(item.guid)
      expect(obj['title']).toBe(item.title)
    }
    expect(embedded / feed.items.length).toBeGreaterThan(0.5)
    expect(embedded).toBeLessThan(feed.items.length)
  })
})

describe('demo JSON Lines and CSV files', () => {
  it('builds the JSON text of a posting with the same content as its JobPosting object', () => {
    let n = 0
    generatePostings({ seed: 8, months: demoMonths('2025-06-15', 12), perMonth: 40 }, (p) => {
      for (const opts of [{ html: true, dateOnly: true }, { html: false, dateOnly: false }]) {
        expect(JSON.parse(jobPostingJson(p, opts))).toEqual(jobPostingObject(p, opts))
        expect(jobPostingJson(p, opts)).toBe(JSON.stringify(jobPostingObject(p, opts)))
      }
      n++
    })
    expect(n).toBeGreaterThan(400)
  })

  it('hold one JobPosting per line with the fields the postings input kind needs', () => {
    const ids = new Set<string>()
    let withSkills = 0
    let lines = 0
    for (const j of manifest.jsonl) {
      for (const line of fs.readFileSync(path.join(dataDir, j.file), 'utf8').split('\n').filter(Boolean)) {
        const p = JSON.parse(line) as Record<string, unknown>
        lines++
        expect(p['@type']).toBe('JobPosting')
        for (const k of ['identifier', 'title', 'description', 'datePosted', 'hiringOrganization', 'occupationalCategory']) expect(p[k], k).toBeTruthy()
        expect(String(p['datePosted']) >= '2022-07-01' && String(p['datePosted']) <= '2025-06-15T23:59:59Z').toBe(true)
        expect(roleNames.has(p['occupationalCategory'] as string)).toBe(true)
        expect(ids.has(p['identifier'] as string)).toBe(false)
        ids.add(p['identifier'] as string)
        if (p['skills'] !== undefined) withSkills++
      }
    }
    expect(withSkills / lines).toBeGreaterThan(0.2)
    expect(withSkills / lines).toBeLessThan(0.5)
  })

  it('write requests and courses with the columns of their input kinds', () => {
    const requests = parseCsv(path.join(dataDir, manifest.requests))
    expect(Object.keys(requests[0]!)).toEqual(['timestamp', 'text', 'channel', 'team'])
    expect(requests.length).toBe(manifest.counts.requests)
    const courses = parseCsv(path.join(dataDir, manifest.tables.courses))
    expect(Object.keys(courses[0]!)).toEqual(['course_id', 'title', 'skills', 'last_reviewed', 'enrollments_12m', 'owner', 'enrollments_prev_12m'])
  })
})

describe('demo feeds over HTTP', () => {
  it('are served by the dashboard route /feeds/<name> with caching headers', async () => {
    const app = new Hono()
    mountFeeds(app, dataDir)
    for (const f of manifest.feeds) {
      const name = path.basename(f.file)
      const res = await app.request(`http://127.0.0.1/feeds/${name}`)
      expect(res.status, name).toBe(200)
      expect(res.headers.get('content-type')).toMatch(name.endsWith('.atom') ? /atom\+xml/ : /rss\+xml/)
      const again = await app.request(`http://127.0.0.1/feeds/${name}`, { headers: { 'If-None-Match': res.headers.get('etag')! } })
      expect(again.status).toBe(304)
    }
  })
})
