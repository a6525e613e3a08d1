import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { main, type Io } from '../../src/cli.ts'
import { progressAllowed, progressLine } from '../../src/ingest/progress.ts'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-ingest-cli-'))
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))
const FIXTURES = path.join(import.meta.dirname, '..', 'fixtures', 'feeds')

async function tides(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = ''
  let err = ''
  const io: Io = { out: (t) => (out += t), err: (t) => (err += t), isTty: false }
  const code = await main(args, io)
  return { code, out, err }
}

function write(name: string, content: string): string {
  const file = path.join(dir, name)
  fs.writeFileSync(file, content)
  return file
}

const line = (id: string, date = '2023-03-01') => JSON.stringify({ '@type': 'JobPosting', identifier: id, title: `Role ${id}`, description: `Duties of role ${id} in the Fernhollow bakery.`, datePosted: date })

describe('tides import postings | requests', () => {
  it('a file with bad rows imports nothing unless --skip-bad; problems name file, line and field', async () => {
    const db = path.join(dir, 'imp.db')
    const file = write('p.jsonl', [line('a'), line('b', '2023-02-31'), line('c'), '{"nope"'].join('\n') + '\n')
    const refused = await tides('--db', db, 'import', 'postings', file)
    expect(refused.code).toBe(1)
    expect(refused.err).toContain(`${file}:2: column datePosted: "2023-02-31" is not a calendar date`)
    expect(refused.err).toContain(`${file}:4: not valid JSON`)
    expect(refused.err).toMatch(/nothing imported from a file with bad rows/)
    const counts = await tides('--db', db, 'report', 'runs', '--json')
    expect(JSON.parse(counts.out)).toEqual([])
    // a file that cannot be read is not called a file with bad rows
    const missing = await tides('--db', db, 'import', 'postings', path.join(dir, 'no-such.jsonl'))
    expect(missing.code).toBe(1)
    expect(missing.err).toContain('no-such.jsonl: cannot read: no such file or folder (ENOENT)')
    expect(missing.err).toMatch(/nothing imported from a file that could not be read as postings/)
    expect(missing.err).not.toMatch(/bad rows/)

    const skipped = await tides('--db', db, 'import', 'postings', file, '--skip-bad')
    expect(skipped.code).toBe(0)
    expect(skipped.err).toContain(`${file}: 2 postings imported of 4 read, 2 bad rows skipped`)
    // the same file again: the same external ids, nothing new
    const again = await tides('--db', db, 'import', 'postings', file, '--skip-bad', '--json')
    expect(again.code).toBe(0)
    expect(JSON.parse(again.out)[0]).toMatchObject({ kind: 'postings', read: 4, imported: 0, skipped: 2, refused: false })
    const runs = JSON.parse((await tides('--db', db, 'report', 'runs', '--json')).out)
    expect(runs.map((r: { source: string; status: string; new: number; rejected: number }) => [r.source, r.status, r.new, r.rejected])).toEqual([
      ['import:postings', 'partial', 0, 2],
      ['import:postings', 'partial', 2, 2],
    ])
  })

  it('imports feeds (RSS, Atom) as postings and request logs from CSV and JSON Lines', async () => {
    const db = path.join(dir, 'kinds.db')
    expect((await tides('--db', db, 'import', 'postings', path.join(FIXTURES, 'rss2-spec.xml'), path.join(FIXTURES, 'atom-rfc4287.xml'))).code).toBe(0)
    const csv = write('req.csv', 'timestamp,text,channel,team\n2023-01-05T09:00:00Z,Intro to SQL,portal,north\n2023-01-06T10:00:00Z,Negotiation skills,helpdesk,south\n')
    const jsonl = write('req.jsonl', JSON.stringify({ timestamp: '2023-01-07T11:00:00Z', text: 'Kubernetes basics', channel: 'search' }) + '\n')
    const r = await tides('--db', db, 'import', 'requests', csv, jsonl, '--json')
    expect(r.code).toBe(0)
    expect(JSON.parse(r.out).map((x: { imported: number }) => x.imported)).toEqual([2, 1])
    const wrong = await tides('--db', db, 'import', 'requests', path.join(FIXTURES, 'rss2-spec.xml'))
    expect(wrong.code).toBe(1)
    expect(wrong.err).toMatch(/expected a \.csv or \.jsonl request log/)
  })
})

describe('tides run ingest', () => {
  it('runs the configured sources (or one with --source), one job run per source, visible in report runs', async () => {
    const a = write('a.jsonl', [line('a1'), line('a2')].join('\n') + '\n')
    const cfgFile = write(
      'tides.config.json',
      JSON.stringify({ db: 'run.db', sources: [{ id: 'a', kind: 'jsonl', location: 'a.jsonl' }, { id: 'missing', kind: 'feed', location: 'nowhere.xml' }] }),
    )
    expect(a).toBe(path.join(dir, 'a.jsonl'))
    const all = await tides('--config', cfgFile, 'run', 'ingest', '--only', '--json')
    // one source failed, one ran: the stage is partial, not failed
    expect(all.code).toBe(0)
    const outcome = JSON.parse(all.out)[0]
    expect(outcome.result).toMatchObject({ status: 'partial', counts: expect.objectContaining({ sources: 2, failedSources: 1, new: 2 }) })
    expect(outcome.result.summary).toMatch(/missing failed: cannot read nowhere\.xml: no such file or folder/)
    const one = await tides('--config', cfgFile, 'run', 'ingest', '--source', 'missing', '--only')
    expect(one.code).toBe(1)
    expect(one.err).toMatch(/ingest failed: missing: cannot read nowhere\.xml/)
    const unknown = await tides('--config', cfgFile, 'run', 'ingest', '--source', 'nope', '--only')
    expect(unknown.code).toBe(1)
    expect(unknown.err).toMatch(/unknown source "nope" \(configured: a, missing\)/)
    const runs = JSON.parse((await tides('--config', cfgFile, 'report', 'runs', '--json')).out)
    expect(runs.filter((r: { stage: string }) => r.stage === 'ingest').map((r: { source: string; status: string }) => `${r.source}:${r.status}`)).toEqual(['missing:failed', 'missing:failed', 'a:ok'])
    // the local file did not change: the next run reads nothing
    const rerun = JSON.parse((await tides('--config', cfgFile, 'run', 'ingest', '--source', 'a', '--only', '--json')).out)[0]
    expect(rerun.result.counts).toMatchObject({ read: 0, new: 0 })
  })
})

describe('progress line', () => {
  it('is drawn only on a terminal, never under --json or in CI', () => {
    expect(progressAllowed({}, ['node', 'tides', 'import'], true)).toBe(true)
    expect(progressAllowed({}, ['node', 'tides', 'import'], false)).toBe(false)
    expect(progressAllowed({}, ['node', 'tides', 'import', '--json'], true)).toBe(false)
    expect(progressAllowed({ CI: 'true' }, ['node', 'tides'], true)).toBe(false)
    expect(progressAllowed({ TIDES_PROGRESS: '0' }, ['node', 'tides'], true)).toBe(false)
  })

  it('shows documents/s and an ETA from the fraction read', () => {
    expect(progressLine('ingest feed', 5000, 2000, 0.25)).toBe('ingest feed: 5,000 docs, 2,500 docs/s, 25% ETA 6 s')
    expect(progressLine('ingest feed', 10, 1000)).toBe('ingest feed: 10 docs, 10 docs/s')
  })
})
