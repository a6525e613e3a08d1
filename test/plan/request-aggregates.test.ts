/**
 * The plan stage's request reading from the demand aggregates (requestTotalsByMonth,
 * requestMentionCountsByMonth) against the full reading from every document and mention it replaced
 * (documentTotalsByMonth, mentionCountsByMonth), on requests stored through the real stages (import,
 * then map), after a second import with reposts, and after an accepted candidate term re-maps.
 */
import { describe, it, expect, afterAll } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { loadConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { documentTotalsByMonth, mentionCountsByMonth, requestMentionCountsByMonth, requestTotalsByMonth } from '../../src/db/plan.ts'
import { countUnmapped, replaceOpenCandidates } from '../../src/db/taxonomy.ts'
import { importDocuments } from '../../src/ingest/import.ts'
import { acceptAsConcept } from '../../src/taxonomy/decisions.ts'
import { mapStage } from '../../src/taxonomy/stage.ts'

const config = loadConfig({ db: ':memory:' })
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-plan-requests-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))

const ASKS = [
  'Need a Python course for the depot team',
  'Kubernetes training please, and Terraform too',
  'Excel refresher for the finance office',
  'Forklift licence renewal for the yard',
  'Quillstream orchestration workshop for the night shift',
  'SQL reporting course and stakeholder management coaching',
]
const WORDS = 'alder birch cedar damson elder fennel gorse hazel ivy juniper kale larch maple nettle oak poplar'.split(' ')

function requests(prefix: string, from: number, months: number, perMonth: number) {
  const out: { timestamp: string; text: string; channel: string; team: string }[] = []
  let n = 0
  for (let m = from; m < from + months; m++) {
    for (let i = 0; i < perMonth; i++, n++) {
      const filler = Array.from({ length: 8 }, (_, k) => WORDS[(n * 3 + k * 5 + m) % WORDS.length]).join(' ')
      const month = `${2024 + Math.floor((m - 1) / 12)}-${String(((m - 1) % 12) + 1).padStart(2, '0')}`
      out.push({ timestamp: `${month}-${String(2 + (i % 25)).padStart(2, '0')}T09:00:00Z`, text: `${ASKS[(n + m) % ASKS.length]} ${filler} ${prefix}${n}`, channel: 'portal', team: i % 2 ? 'north' : 'south' })
    }
  }
  return out
}

async function importRequests(db: Db, rows: readonly object[]): Promise<void> {
  const file = path.join(tmp, `r-${Math.random().toString(36).slice(2)}.jsonl`)
  fs.writeFileSync(file, rows.map((r) => JSON.stringify(r)).join('\n') + '\n')
  const r = await importDocuments(db, config, 'requests', file, { skipBad: false })
  expect(r.refused).toBe(false)
}

const map = (db: Db) => mapStage.run({ db, config, log: () => {}, trigger: 'manual', options: {} })

function expectSameAsFullReading(db: Db): void {
  expect(countUnmapped(db)).toBe(0)
  const sort = (rows: { concept_id: string; month: string; n: number }[]) =>
    [...rows].sort((a, b) => (a.concept_id < b.concept_id ? -1 : a.concept_id > b.concept_id ? 1 : a.month < b.month ? -1 : a.month > b.month ? 1 : 0))
  expect(requestMentionCountsByMonth(db)).toEqual(sort(mentionCountsByMonth(db, 'request')))
  expect([...requestTotalsByMonth(db)].sort()).toEqual([...documentTotalsByMonth(db, 'request')].sort())
}

describe('plan reads request counts from the demand aggregates', () => {
  it('equal the full reading from documents and mentions after import and map, a second import with reposts, and an accepted term', async () => {
    const db = openDb(':memory:')
    const first = requests('a', 1, 8, 9)
    await importRequests(db, first)
    await map(db)
    expectSameAsFullReading(db)
    const counts = requestMentionCountsByMonth(db)
    // a real fixture: several concepts over several months, roll-ups included
    expect(new Set(counts.map((r) => r.concept_id)).size).toBeGreaterThan(4)
    expect(new Set(counts.map((r) => r.month)).size).toBe(8)

    // a second import: new months, and exact reposts of earlier requests (stored as duplicates, never counted)
    await importRequests(db, [...requests('b', 7, 4, 6), ...first.slice(0, 5).map((r) => ({ ...r, timestamp: r.timestamp.replace('T09', 'T11') }))])
    await map(db)
    expectSameAsFullReading(db)

    // accepting a candidate term re-maps the requests that contain it
    replaceOpenCandidates(db, [{ term: 'night shift', score: 10, recentDf: 5, earlierDf: 0, trend: [], examples: [] }])
    acceptAsConcept(db, 'night shift', { id: 'night-shift', label: 'night shift', type: 'hard' }, 'curator')
    expect(countUnmapped(db)).toBeGreaterThan(0)
    await map(db)
    expectSameAsFullReading(db)
    expect(requestMentionCountsByMonth(db).some((r) => r.concept_id === 'night-shift')).toBe(true)
  })
})
