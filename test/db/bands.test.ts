import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { insertSortedBandRows, mergeRecentBands, recentBandRows, writeBandRun } from '../../src/db/bands.ts'
import { type Db, openDb } from '../../src/db/connection.ts'
import { DocumentStore, bandKeyCount, clearBands, iterateBandKeys, storedBandKey } from '../../src/db/documents.ts'

type Row = readonly [key: number, doc: number]

const levelRows = (db: Db, table: string): Row[] => db.prepare(`SELECT key, document_id FROM ${table} ORDER BY key, document_id`).raw().all() as never
const sortRows = (rows: Iterable<Row>): Row[] => [...rows].sort((a, b) => a[0] - b[0] || a[1] - b[1])
const unique = (rows: Iterable<Row>): Row[] => sortRows(new Map([...rows].map((r) => [`${r[0]}:${r[1]}`, r])).values())

/** A sorted run of rows, as the dedupe writes them. */
function run(rows: readonly Row[]): { keys: Float64Array; docs: Float64Array } {
  const sorted = sortRows(rows)
  return { keys: Float64Array.from(sorted, (r) => r[0]), docs: Float64Array.from(sorted, (r) => r[1]) }
}

describe('two levels of band rows', () => {
  it('a small run goes to the recent level, a run past the fraction goes to the big level with the recent rows', () => {
    const db = openDb(':memory:')
    const first = run([[5, 1], [3, 1], [9, 2]])
    // nothing stored: the run is more than an eighth of all rows, so it goes to the big level
    expect(writeBandRun(db, first.keys, first.docs, 3)).toEqual({ level: 'document_bands', merged: false })
    const second = run([[4, 3], [3, 3]])
    expect(writeBandRun(db, second.keys, second.docs, 40)).toEqual({ level: 'document_bands_recent', merged: false })
    expect(levelRows(db, 'document_bands')).toEqual([[3, 1], [5, 1], [9, 2]])
    expect(levelRows(db, 'document_bands_recent')).toEqual([[3, 3], [4, 3]])
    expect(recentBandRows(db)).toBe(2)
    // 2 + 4 rows are more than an eighth of 40: everything goes to the big level, the recent one is emptied
    const third = run([[1, 4], [8, 4], [3, 4], [5, 4]])
    expect(writeBandRun(db, third.keys, third.docs, 40)).toEqual({ level: 'document_bands', merged: true })
    expect(levelRows(db, 'document_bands_recent')).toEqual([])
    expect(levelRows(db, 'document_bands')).toEqual([[1, 4], [3, 1], [3, 3], [3, 4], [4, 3], [5, 1], [5, 4], [8, 4], [9, 2]])
  })

  it('lookups, the filter keys and their count read both levels; clearing empties both', () => {
    const db = openDb(':memory:')
    const store = new DocumentStore(db, 2)
    const key = (band: number, h: number) => band * 0x1_0000_0000 + h
    const big = run([[key(0, 7), 1], [key(1, 7), 1]])
    insertSortedBandRows(db, big.keys, big.docs)
    const recent = run([[key(0, 7), 2], [key(1, 9), 2]])
    insertSortedBandRows(db, recent.keys, recent.docs, 'document_bands_recent')
    expect(store.bandDocuments(storedBandKey(0, 7)).sort()).toEqual([1, 2])
    expect(store.bandDocuments(storedBandKey(1, 7))).toEqual([1])
    expect(store.bandDocuments(storedBandKey(1, 9))).toEqual([2])
    expect(store.bandDocuments(storedBandKey(0, 9))).toEqual([])
    expect(bandKeyCount(db)).toBe(4)
    expect([...iterateBandKeys(db)].sort((a, b) => a - b)).toEqual([key(0, 7), key(0, 7), key(1, 7), key(1, 9)])
    clearBands(db)
    expect(bandKeyCount(db)).toBe(0)
  })

  it('whatever the sequence of runs and fraction, the two levels together hold exactly the rows written', () => {
    const rowArb = fc.tuple(fc.integer({ min: 0, max: 40 }), fc.integer({ min: 1, max: 30 }))
    fc.assert(
      fc.property(fc.array(fc.array(rowArb, { maxLength: 25 }), { minLength: 1, maxLength: 12 }), fc.double({ min: 0, max: 1, noNaN: true }), (runs, fraction) => {
        const db = openDb(':memory:')
        const written: Row[] = []
        let total = 0
        for (const rows of runs) {
          const r = run(unique(rows))
          total += r.keys.length
          const before = recentBandRows(db)
          const { level, merged } = writeBandRun(db, r.keys, r.docs, total, fraction)
          written.push(...unique(rows))
          const after = recentBandRows(db)
          if (level === 'document_bands_recent') expect(after).toBeLessThanOrEqual(fraction * total)
          else expect(after).toBe(0)
          expect(merged).toBe(level === 'document_bands' && before > 0)
        }
        const both = [...levelRows(db, 'document_bands'), ...levelRows(db, 'document_bands_recent')]
        // a row written twice may sit in both levels (lookups then see its document twice, which a set
        // of candidates absorbs); as a set, the levels hold exactly what was written
        expect(unique(both)).toEqual(unique(written))
        db.close()
      }),
      { numRuns: 60 },
    )
  })

  it('a merge keeps a row that is in both levels once', () => {
    const db = openDb(':memory:')
    const r = run([[2, 1], [6, 1]])
    insertSortedBandRows(db, r.keys, r.docs)
    insertSortedBandRows(db, r.keys, r.docs, 'document_bands_recent')
    mergeRecentBands(db)
    expect(levelRows(db, 'document_bands')).toEqual([[2, 1], [6, 1]])
    expect(recentBandRows(db)).toBe(0)
  })
})
