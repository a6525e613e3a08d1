import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { inboxJob } from '../../jobs/inbox.ts'
import { parseConfig } from '../../src/config.ts'
import { openDb } from '../../src/db/connection.ts'
import { listRuns } from '../../src/db/runs.ts'
import { ingestSources } from '../../src/ingest/stage.ts'
import { startSchedules } from '../../src/schedule.ts'
import { rssFeed } from './server.ts'

const root = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-inbox-'))
afterAll(() => fs.rmSync(root, { recursive: true, force: true }))

const posting = (id: string, extra: Record<string, unknown> = {}) =>
  JSON.stringify({ '@type': 'JobPosting', identifier: id, title: `Role ${id}`, description: `Work ${id} at the Fernhollow orchard, picking and packing.`, datePosted: '2023-06-01', ...extra })

function inbox(name: string) {
  const folder = path.join(root, name)
  fs.mkdirSync(folder, { recursive: true })
  const config = parseConfig({ sources: [{ id: name, kind: 'folder', location: folder }] })
  return { folder, config, put: (file: string, content: string) => fs.writeFileSync(path.join(folder, file), content) }
}

const ls = (dir: string) => (fs.existsSync(dir) ? fs.readdirSync(dir).sort() : [])

describe('inbox folders', () => {
  it('ingests each file once, then moves it to processed/ or rejected/ with a reason', async () => {
    const box = inbox('drop')
    box.put('a-good.jsonl', [posting('g1'), posting('g2')].join('\n') + '\n')
    box.put('b-mixed.jsonl', [posting('m1'), '{broken', posting('m3', { datePosted: 'soon' })].join('\n') + '\n')
    box.put('c-requests.csv', 'timestamp,channel\n2023-01-01,portal\n')
    box.put('d-notes.txt', 'hello')
    box.put('e-feed.xml', rssFeed(3, 'inbox'))
    box.put('f-requests.csv', 'timestamp,text,channel,team\n2023-01-01T10:00:00Z,SQL for analysts,portal,north\n')
    box.put('g-upload.jsonl.part', posting('p1'))
    box.put('.hidden.jsonl', posting('h1'))
    box.put('h-empty.jsonl', '')
    const db = openDb(':memory:')
    const [report] = await ingestSources(db, box.config)
    expect(report!.counts).toMatchObject({ new: 7, rejected: 2 })
    expect(ls(box.folder)).toEqual(['.hidden.jsonl', 'g-upload.jsonl.part', 'processed', 'rejected'])
    expect(ls(path.join(box.folder, 'processed'))).toEqual(['a-good.jsonl', 'b-mixed.jsonl', 'b-mixed.jsonl.problems.txt', 'e-feed.xml', 'f-requests.csv'])
    expect(ls(path.join(box.folder, 'rejected'))).toEqual(['c-requests.csv', 'c-requests.csv.reason.txt', 'd-notes.txt', 'd-notes.txt.reason.txt', 'h-empty.jsonl', 'h-empty.jsonl.reason.txt'])
    const problems = fs.readFileSync(path.join(box.folder, 'processed', 'b-mixed.jsonl.problems.txt'), 'utf8')
    expect(problems).toMatch(/b-mixed\.jsonl:2: not valid JSON/)
    expect(problems).toMatch(/b-mixed\.jsonl:3: field datePosted: "soon" is neither an RFC 822 nor an ISO 8601 date/)
    expect(fs.readFileSync(path.join(box.folder, 'rejected', 'c-requests.csv.reason.txt'), 'utf8')).toMatch(/column text: missing required column/)
    expect(fs.readFileSync(path.join(box.folder, 'rejected', 'd-notes.txt.reason.txt'), 'utf8')).toMatch(/unknown file type/)
    expect(fs.readFileSync(path.join(box.folder, 'rejected', 'h-empty.jsonl.reason.txt'), 'utf8')).toMatch(/empty file/)
    const kinds = db.prepare('SELECT kind, COUNT(*) AS n FROM documents GROUP BY kind ORDER BY kind').all()
    expect(kinds).toEqual([
      { kind: 'posting', n: 6 },
      { kind: 'request', n: 1 },
    ])
    const run = listRuns(db, 1)[0]!
    expect(run.status).toBe('partial')
    expect(run.error).toMatch(/3 of 7 file\(s\) rejected/)
    // a second run finds nothing waiting
    const [again] = await ingestSources(db, box.config)
    expect(again!.counts.read).toBe(0)
  })

  it('a file seen again (a crash between commit and move) stores nothing twice and still moves', async () => {
    const box = inbox('again')
    box.put('x.jsonl', posting('x1') + '\n')
    const db = openDb(':memory:')
    await ingestSources(db, box.config)
    box.put('x.jsonl', posting('x1') + '\n')
    const [r] = await ingestSources(db, box.config)
    expect(r!.counts).toMatchObject({ read: 1, new: 0, alreadyStored: 1 })
    expect(db.prepare('SELECT COUNT(*) FROM documents').pluck().get()).toBe(1)
    const processed = ls(path.join(box.folder, 'processed'))
    // the second copy keeps the first one: it is stored under a time-stamped name
    expect(processed).toHaveLength(2)
    expect(processed).toContain('x.jsonl')
    expect(processed.some((f) => /^x-\d{4}-\d{2}-\d{2}T\d+Z\.jsonl$/.test(f))).toBe(true)
  })

  it('a file that appears is ingested without waiting for a schedule (fs.watch)', async () => {
    const box = inbox('watched')
    const db = openDb(path.join(root, 'watched.db'))
    const log: string[] = []
    const scheduler = startSchedules(db, box.config, [inboxJob], (m) => log.push(m))
    try {
      expect(scheduler.watchers).toHaveLength(1)
      // written under a temporary name, then renamed: the documented way to drop a file
      box.put('new.jsonl.part', posting('w1') + '\n')
      fs.renameSync(path.join(box.folder, 'new.jsonl.part'), path.join(box.folder, 'new.jsonl'))
      const deadline = Date.now() + 20_000
      while (!ls(path.join(box.folder, 'processed')).includes('new.jsonl') && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100))
      expect(ls(path.join(box.folder, 'processed'))).toContain('new.jsonl')
      expect(db.prepare('SELECT external_id FROM documents').pluck().all()).toEqual(['w1'])
      expect(listRuns(db, 5).some((r) => r.source_id === 'watched' && r.trigger === 'watch')).toBe(true)
    } finally {
      await scheduler.stop()
      db.close()
    }
  })
})
