import { describe, it, expect } from 'vitest'
import { spawnSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { main, type Io } from '../../src/cli.ts'

async function tides(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = ''
  let err = ''
  const io: Io = { out: (t) => (out += t), err: (t) => (err += t), isTty: false }
  const code = await main(args, io)
  return { code, out, err }
}

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-map-cli-'))
const db = path.join(dir, 't.db')

describe('tides map', () => {
  it('prints one JSON document for --text with ids, labels and spans', async () => {
    const r = await tides('--db', db, 'map', '--text', 'Go services on Kubernetes; excel at negotiating', '--json')
    expect(r.code).toBe(0)
    const doc = JSON.parse(r.out)
    expect(doc.taxonomy).toBe('shipped')
    expect(doc.skills.map((s: { id: string }) => s.id)).toEqual(['go', 'kubernetes', 'negotiation'])
    expect(doc.skills[2].spans[0]).toMatchObject({ text: 'negotiating', label: 'negotiating', field: 'text' })
    expect(doc.rollups.map((x: { id: string }) => x.id)).toContain('containers')
  })

  it('explains what the rules turned down', async () => {
    const r = await tides('--db', db, 'map', '--text', 'Excel at teamwork', '--json', '--explain')
    const doc = JSON.parse(r.out)
    expect(doc.rejected).toEqual([expect.objectContaining({ id: 'microsoft-excel', reason: 'not-next' })])
  })

  it('maps a JSON Lines file of postings, reporting bad lines on stderr only', async () => {
    const file = path.join(dir, 'p.jsonl')
    fs.writeFileSync(file, [
      JSON.stringify({ identifier: 'j1', title: 'Rust engineer', description: '<p>Systems programming in <b>Rust</b>.</p>' }),
      '{ not json',
      JSON.stringify({ identifier: { '@type': 'PropertyValue', value: 'j2' }, title: 'Analyst', description: 'Reports.', skills: 'SQL, Power BI' }),
    ].join('\n'))
    const r = await tides('--db', db, 'map', file, '--json')
    expect(r.code).toBe(0)
    const docs = JSON.parse(r.out)
    expect(docs.map((d: { id: string; line: number }) => [d.id, d.line])).toEqual([['j1', 1], ['j2', 3]])
    expect(docs[0].skills.map((s: { id: string }) => s.id)).toEqual(['rust', 'programming'])
    expect(docs[1].skills.map((s: { id: string }) => s.id)).toEqual(['sql', 'power-bi'])
    expect(r.err).toMatch(/p\.jsonl:2: not JSON/)
  })

  it('answers usage errors with exit 2', async () => {
    expect((await tides('--db', db, 'map')).code).toBe(2)
    expect((await tides('--db', db, 'map', '--text', 'x', 'file.jsonl')).code).toBe(2)
    const missing = await tides('--db', db, 'map', path.join(dir, 'missing.jsonl'))
    expect(missing.code).toBe(1)
    expect(missing.err).toMatch(/cannot read/)
  })

  it('prints only JSON on stdout when run as a process (no dotenv banner)', () => {
    const r = spawnSync(process.execPath, ['--import', 'tsx', 'src/cli.ts', '--db', db, 'map', '--text', 'negotiating in Excel', '--json'], { cwd: process.cwd(), encoding: 'utf8' })
    expect(r.status).toBe(0)
    expect(() => JSON.parse(r.stdout)).not.toThrow()
  })
})

describe('tides import taxonomy and report candidates', () => {
  it('imports a CSV taxonomy, refusing bad rows with their lines', async () => {
    const good = path.join(dir, 'mine.csv')
    fs.writeFileSync(good, 'id,prefLabel,altLabel,hiddenLabel,broader,type\nquill,Quillstream,,,,hard\nbad,Bad,,,nowhere,hard\n')
    const refused = await tides('--db', db, 'import', 'taxonomy', good)
    expect(refused.code).toBe(1)
    expect(refused.err).toMatch(/mine\.csv:3: column broader: error: broader "nowhere"/)
    const ok = await tides('--db', db, 'import', 'taxonomy', good, '--skip-bad', '--json')
    expect(ok.code).toBe(0)
    expect(JSON.parse(ok.out)[0]).toMatchObject({ kind: 'taxonomy', imported: 2, refused: false })
    const mapped = JSON.parse((await tides('--db', db, 'map', '--text', 'We use Quillstream', '--json')).out)
    expect(mapped.taxonomy).toBe('database')
    expect(mapped.skills.map((s: { id: string }) => s.id)).toEqual(['quill'])
  })

  it('reports candidates as a table, CSV or JSON', async () => {
    const r = await tides('--db', db, 'report', 'candidates', '--json')
    expect(r.code).toBe(0)
    expect(JSON.parse(r.out)).toEqual([])
  })
})
