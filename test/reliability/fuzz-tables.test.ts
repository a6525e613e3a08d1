/**
 * Fuzzing the CSV table imports (people, roles, items, responses, abilities, courses) with fast-check,
 * seeded and bounded: random bytes, valid files with planted bad rows, truncation, wrong encodings,
 * huge fields, control characters and formula-injection cells. The import rules under test
 * (src/inputs/tables.ts): never crash; a bad row is reported with its file, line and column; a file
 * with bad rows stores nothing unless skip-bad is set, and then exactly the good rows land.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import fc from 'fast-check'
import { afterAll, describe, expect, it } from 'vitest'
import { contentHash, openDb, type Db } from '../../src/db/connection.ts'
import { TABLE_KINDS, importTableFile, importTableText, tableColumns, type TableKind } from '../../src/inputs/tables.ts'
import { formatProblem } from '../../src/util/csv.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-fuzz-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))

/** A database with the items that responses may refer to. */
function freshDb(): Db {
  const db = openDb(':memory:')
  importTableText(db, 'items', 'item_id,skill_id,a,b,c\nitem-0,sql,1,0,\nitem-1,sql,1.2,0.5,0.2\nitem-2,python,0.8,-1,\n', 'items.csv')
  return db
}

function csvCell(v: string): string {
  return /[",\r\n]/.test(v) || /^\s|\s$/.test(v) ? `"${v.replace(/"/g, '""')}"` : v
}

// ---- valid and invalid field values -------------------------------------------------------------

/** text that the import must accept verbatim (after trimming): unicode, quotes, commas, formula cells */
const decoratedText = fc.oneof(
  fc.constantFrom('plain', 'Zoë Ærø', 'a,b', 'say "hi"', "=cmd|' /C calc'!A0", '+SUM(1)', '-2+3', '@risk', 'line\nbreak', '日本語', 'x\ty'),
  fc.string({ unit: 'grapheme', minLength: 1, maxLength: 12 }).filter((s) => s.trim() !== '' && !/[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f\ufffd]/.test(s)),
)

type Column = 'id' | 'text' | 'optionalText' | 'number' | 'date' | 'optionalDate' | 'item' | 'list' | 'count'
/** what each column of each kind is, and the number range where it has one */
const COLUMN_TYPES: Record<TableKind, Record<string, { type: Column; min?: number; max?: number; integer?: boolean; optional?: boolean }>> = {
  people: { person_id: { type: 'id' }, role: { type: 'text' }, team: { type: 'optionalText' } },
  roles: { role: { type: 'id' }, skill_id: { type: 'text' }, required_theta: { type: 'number', min: -6, max: 6 } },
  items: { item_id: { type: 'id' }, skill_id: { type: 'text' }, a: { type: 'number', min: 0.01, max: 10, optional: true }, b: { type: 'number', min: -10, max: 10, optional: true }, c: { type: 'number', min: 0, max: 0.99, optional: true } },
  responses: { person_id: { type: 'id' }, item_id: { type: 'item' }, response: { type: 'number', min: 0, max: 1, integer: true }, taken_at: { type: 'date' } },
  abilities: { person_id: { type: 'id' }, skill_id: { type: 'text' }, theta: { type: 'number', min: -10, max: 10 }, se: { type: 'number', min: 0.0001, max: 10 }, assessed_at: { type: 'date' } },
  courses: {
    course_id: { type: 'id' },
    title: { type: 'text' },
    skills: { type: 'list' },
    last_reviewed: { type: 'optionalDate' },
    enrollments_12m: { type: 'count', optional: true },
    owner: { type: 'optionalText' },
  },
}

function goodValue(spec: (typeof COLUMN_TYPES)[TableKind][string], index: number): fc.Arbitrary<string> {
  switch (spec.type) {
    case 'id':
      return decoratedText.map((t) => `${t.trim()}#${index}`)
    case 'text':
      return decoratedText
    case 'optionalText':
      return fc.oneof(decoratedText, fc.constant(''))
    case 'item':
      return fc.constantFrom('item-0', 'item-1', ' item-2 ')
    case 'list':
      return fc.array(fc.constantFrom('sql', 'python', 'Go', '=1+1', 'data privacy'), { maxLength: 4 }).map((xs) => xs.join('|'))
    case 'date':
    case 'optionalDate': {
      const d = fc.date({ min: new Date('1990-01-01T00:00:00Z'), max: new Date('2090-12-31T00:00:00Z'), noInvalidDate: true })
      const iso = fc.oneof(d.map((x) => x.toISOString().slice(0, 10)), d.map((x) => x.toISOString()), d.map((x) => x.toISOString().slice(0, 19).replace('T', ' ')))
      return spec.type === 'optionalDate' ? fc.oneof(iso, fc.constant('')) : iso
    }
    case 'count':
      return fc.oneof(fc.nat(100000).map(String), fc.constant(''))
    case 'number': {
      const lo = spec.min ?? -1e6
      const hi = spec.max ?? 1e6
      const n = spec.integer ? fc.integer({ min: Math.ceil(lo), max: Math.floor(hi) }) : fc.double({ min: lo, max: hi, noNaN: true, noDefaultInfinity: true })
      const text = n.map((x) => (Object.is(x, -0) ? '0' : String(x)))
      return spec.optional ? fc.oneof(text, fc.constant('')) : text
    }
  }
}

function badValue(spec: (typeof COLUMN_TYPES)[TableKind][string]): fc.Arbitrary<string> | null {
  const control = fc.constantFrom('\u0001', '\u0007', '\u001b[2J', '\u0000').map((c) => `bad${c}value`)
  switch (spec.type) {
    case 'id':
    case 'text':
      return fc.oneof(control, fc.constant(''), fc.constant('   '), fc.constant('x'.repeat(50_001)))
    case 'optionalText':
      return control
    case 'item':
      return fc.constantFrom('ghost-item', '=cmd|calc')
    case 'list':
      return null
    case 'date':
      return fc.constantFrom('', '2026-02-30', 'yesterday', '31/12/2025', '2026-13-01', '=NOW()', '2026-01-01T25:00:00Z')
    case 'optionalDate':
      return fc.constantFrom('2026-02-30', 'yesterday', '=NOW()')
    case 'count':
      return fc.constantFrom('-1', '1.5', 'many', '1e999', '=1+1')
    case 'number': {
      const out: string[] = ['abc', '1,5', 'NaN', 'Infinity', '1e999', '0x10', '=1+1', '--1']
      if (spec.max !== undefined) out.push(String(spec.max + 1))
      if (spec.min !== undefined) out.push(String(spec.min - 1))
      if (spec.integer) out.push('0.5')
      if (!spec.optional) out.push('')
      return fc.constantFrom(...out)
    }
  }
}

interface Planted {
  lines: string[]
  /** line number (1-based) where each data row starts, and whether it is good */
  rows: { line: number; good: boolean; key: string }[]
}

/** A file of good rows with some bad rows (bad field values or wrong field counts) mixed in. */
function plantedFile(kind: TableKind): fc.Arbitrary<Planted> {
  const cols = [...tableColumns(kind).required]
  const specs = COLUMN_TYPES[kind]
  const keyColumn = cols[0]!
  const row = (index: number) =>
    fc.record({
      bad: fc.boolean(),
      values: fc.tuple(...cols.map((c) => goodValue(specs[c]!, index))),
      badColumn: fc.nat(cols.length - 1),
      badValueIndex: fc.nat(1000),
      structural: fc.constantFrom<'none' | 'extra' | 'missing'>('none', 'none', 'none', 'extra', 'missing'),
    })
  return fc.integer({ min: 1, max: 25 }).chain((count) =>
    fc.tuple(...Array.from({ length: count }, (_, i) => row(i))).chain((rows) => {
      // pick concrete bad values (a separate draw so every column type can produce one)
      const badDraws = rows.map((r) => {
        const specsInOrder = cols.map((c) => specs[c]!)
        const candidates = specsInOrder.map((s, i) => [i, badValue(s)] as const).filter(([, b]) => b !== null) as [number, fc.Arbitrary<string>][]
        const [colIndex, arb] = candidates[r.badColumn % candidates.length]!
        return arb.map((v) => [colIndex, v] as const)
      })
      return fc.tuple(...badDraws).map((bads) => {
        const lines = [cols.join(',')]
        const planted: Planted['rows'] = []
        let line = 2
        rows.forEach((r, i) => {
          const values = [...r.values]
          let good = true
          if (r.bad) {
            good = false
            if (r.structural === 'extra') values.push('surplus')
            else if (r.structural === 'missing') values.pop()
            else {
              const [colIndex, v] = bads[i]!
              values[colIndex] = v
            }
          }
          const text = values.map(csvCell).join(',')
          lines.push(text)
          planted.push({ line, good, key: values[0]!.trim() })
          line += text.split('\n').length
        })
        void keyColumn
        return { lines, rows: planted }
      })
    }),
  )
}

function count(db: Db, table: string): number {
  return (db.prepare(`SELECT COUNT(*) AS n FROM ${table}`).get() as { n: number }).n
}

const TABLE_OF: Record<TableKind, { table: string; key: string }> = {
  people: { table: 'people', key: 'person_id' },
  roles: { table: 'roles', key: 'role' },
  items: { table: 'items', key: 'item_id' },
  responses: { table: 'responses', key: 'person_id' },
  abilities: { table: 'abilities', key: 'person_id' },
  courses: { table: 'courses', key: 'course_id' },
}

describe('table imports under fuzzing', () => {
  for (const kind of TABLE_KINDS) {
    it(`${kind}: planted bad rows are reported by line; skip-bad keeps exactly the good rows; otherwise nothing changes`, () => {
      fc.assert(
        fc.property(plantedFile(kind), (file) => {
          const content = file.lines.join('\n') + '\n'
          const bad = file.rows.filter((r) => !r.good)
          const good = file.rows.filter((r) => r.good)
          // without skip-bad: all or nothing
          const db = freshDb()
          const before = contentHash(db)
          const strict = importTableText(db, kind, content, `${kind}.csv`)
          if (bad.length > 0) {
            expect(strict.refused).toBe(true)
            expect(strict.imported).toBe(0)
            expect(contentHash(db)).toBe(before)
          } else {
            expect(strict.refused).toBe(false)
            expect(strict.imported).toBe(good.length)
          }
          // every problem names the file and the line of a planted bad row, and each bad row has one
          const problemLines = new Set(strict.problems.filter((p) => p.line > 1).map((p) => p.line))
          expect([...problemLines].sort((a, b) => a - b)).toEqual(bad.map((r) => r.line))
          for (const p of strict.problems) expect(formatProblem(p)).toMatch(new RegExp(`^${kind}\\.csv:\\d+: `))
          // with skip-bad: exactly the good rows land
          const db2 = freshDb()
          const lenient = importTableText(db2, kind, content, `${kind}.csv`, { skipBad: true })
          expect(lenient.refused).toBe(false)
          expect(lenient.imported).toBe(good.length)
          expect(lenient.skipped).toBe(bad.length)
          const { table, key } = TABLE_OF[kind]
          const stored = new Set((db2.prepare(`SELECT ${key} AS k FROM ${table}`).all() as { k: string }[]).map((r) => r.k))
          if (kind !== 'items') expect(stored.size).toBe(new Set(good.map((r) => r.key)).size)
          for (const r of good) expect(stored.has(r.key)).toBe(true)
          db.close()
          db2.close()
        }),
        { seed: 4242 + TABLE_KINDS.indexOf(kind), numRuns: 30 },
      )
    })
  }
})

/**
 * Mutations of a valid file: what a broken export, a wrong save dialog or a hostile sender produces,
 * with what the import must then say: `accept` = lands (with skip-bad), else the pattern of the problem.
 */
const MUTATIONS: Record<string, { mutate: (text: string, rnd: number) => string | Buffer; expect: 'accept' | 'any' | RegExp; runs?: number }> = {
  truncated: { mutate: (t, r) => t.slice(0, Math.floor(r * t.length)), expect: 'any', runs: 40 },
  'truncated inside a quote': { mutate: (t) => t + 'p9,"unclosed role\nstill going', expect: /:6: not valid CSV: Quote Not Closed/ },
  'UTF-16LE with BOM': { mutate: (t) => Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(t, 'utf16le')]), expect: /:1: not valid UTF-8 text/ },
  'UTF-16LE without BOM': { mutate: (t) => Buffer.from(t, 'utf16le'), expect: /:1: mostly NUL bytes: .*UTF-16/ },
  'Latin-1 bytes': { mutate: (t) => Buffer.from(t.replace(/analyst/g, 'analysté'), 'latin1'), expect: /:2: not valid UTF-8 text/ },
  'invalid UTF-8 spliced in': {
    mutate: (t, r) => Buffer.concat([Buffer.from(t.slice(0, Math.floor(r * t.length))), Buffer.from([0xc3, 0x28, 0xff, 0x1b]), Buffer.from(t.slice(Math.floor(r * t.length)))]),
    expect: /not valid UTF-8 text/,
    runs: 25,
  },
  'a NUL byte in one field': { mutate: (t) => t.replace('north', 'no\u0000rth'), expect: /:2: column team: contains control characters/ },
  'CRLF line ends': { mutate: (t) => t.replace(/\n/g, '\r\n'), expect: 'accept' },
  'lone CR line ends': { mutate: (t) => t.replace(/\n/g, '\r'), expect: 'accept' },
  'huge field (4 MB)': { mutate: (t) => t + `p-huge,${'r'.repeat(4 * 1024 * 1024)},team\n`, expect: /:5: column role: is longer than 200 characters/ },
  '20,000 columns': { mutate: (t) => t + Array.from({ length: 20_000 }, (_, i) => `c${i}`).join(',') + '\n', expect: /:5: expected 3 fields, found 20000/ },
  'header only': { mutate: (t) => t.split('\n')[0]! + '\n', expect: 'accept' },
  'BOM then header': { mutate: (t) => '\ufeff' + t, expect: 'accept' },
  'empty file': { mutate: () => '', expect: /:1: empty file/ },
  'only blank lines': { mutate: () => '\n\n\r\n\n', expect: /:1: (empty file|column person_id, role: missing required column)/ },
  'header of a different kind': { mutate: () => 'item_id,skill_id,a,b,c\ni1,sql,1,0,\n', expect: /:1: column person_id, role: missing required column/ },
  'formula cells everywhere': { mutate: (t) => t.replace(/^([^,\n]+),/gm, (_m, first: string) => `${first},=cmd|' /C calc'!A0,`), expect: 'accept' },
  // RFC 4180 forbids a quote inside an unquoted field; the parser refuses the file at that line
  'a quote in the middle of a field': { mutate: (t) => t.replace(/analyst/g, 'ana"lyst'), expect: /:2: not valid CSV: Invalid Opening Quote/ },
  'binary garbage': {
    mutate: (_t, r) => Buffer.from(Array.from({ length: 512 }, (_, i) => Math.floor(Math.abs(Math.sin(r * 1000 + i)) * 256))),
    expect: 'any',
    runs: 25,
  },
}

describe('table import files under mutation: no crash, no hang, a clear error', () => {
  const base = 'person_id,role,team\np1,analyst,north\np2,"engineer, senior",south\np3,analyst,\n'
  for (const [name, { mutate, expect: expected, runs }] of Object.entries(MUTATIONS)) {
    it(name, () => {
      fc.assert(
        fc.property(fc.double({ min: 0, max: 1, noNaN: true }), (r) => {
          const file = path.join(tmp, `people-${name.replace(/\W+/g, '-')}.csv`)
          fs.writeFileSync(file, mutate(base, r))
          const db = freshDb()
          const before = contentHash(db)
          let result: ReturnType<typeof importTableFile> | undefined
          expect(() => (result = importTableFile(db, 'people', file, { skipBad: true }))).not.toThrow()
          const res = result!
          const messages = res.problems.map(formatProblem)
          if (expected === 'accept') expect(res).toMatchObject({ refused: false, problems: expect.any(Array) })
          else if (expected instanceof RegExp) expect(messages.join('\n')).toMatch(expected)
          if (res.refused) {
            // refused: a clear problem naming the file, and the database is untouched
            expect(res.problems.length).toBeGreaterThan(0)
            for (const p of res.problems) {
              expect(p.file).toBe(file)
              expect(p.reason.length).toBeGreaterThan(3)
              expect(p.line).toBeGreaterThanOrEqual(0)
            }
            expect(contentHash(db)).toBe(before)
          } else {
            expect(count(db, 'people')).toBe(res.imported)
            expect(res.imported + res.skipped).toBe(res.read)
          }
          db.close()
        }),
        { seed: 777, numRuns: runs ?? 1 },
      )
    })
  }

  it('a huge field is refused by length, naming its line and column, and the good rows survive with skip-bad', () => {
    const text = 'person_id,role,team\np1,analyst,north\np-huge,' + 'r'.repeat(4 * 1024 * 1024) + ',team\np3,lead,south\n'
    const db = freshDb()
    const r = importTableText(db, 'people', text, 'people.csv', { skipBad: true })
    expect(r).toMatchObject({ imported: 2, skipped: 1, refused: false })
    expect(r.problems.map(formatProblem)).toEqual(['people.csv:3: column role: is longer than 200 characters'])
  })

  it('invalid UTF-8 is refused as a whole with the line of the first bad byte', () => {
    const file = path.join(tmp, 'latin1.csv')
    fs.writeFileSync(file, Buffer.from('person_id,role,team\np1,analyst,north\np2,caf\xe9,south\n', 'latin1'))
    const r = importTableFile(freshDb(), 'people', file, { skipBad: true })
    expect(r.refused).toBe(true)
    expect(r.problems.map(formatProblem)).toEqual([`${file}:3: not valid UTF-8 text`])
  })

  it('random bytes: never a crash, always a result', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 2048 }), fc.constantFrom(...TABLE_KINDS), (bytes, kind) => {
        const file = path.join(tmp, `random-${kind}.csv`)
        fs.writeFileSync(file, bytes)
        const db = freshDb()
        const res = importTableFile(db, kind, file, { skipBad: true })
        expect(typeof res.read).toBe('number')
        if (res.refused) expect(res.problems.length).toBeGreaterThan(0)
        db.close()
      }),
      { seed: 31337, numRuns: 100 },
    )
  })

  it('random text with a valid header: never a crash; every problem has a line inside the file', () => {
    fc.assert(
      fc.property(fc.constantFrom(...TABLE_KINDS), fc.string({ unit: 'binary', maxLength: 600 }), (kind, body) => {
        const content = tableColumns(kind).required.join(',') + '\n' + body
        const db = freshDb()
        const res = importTableText(db, kind, content, 'x.csv', { skipBad: true })
        const lineCount = content.split(/\r\n|\r|\n/).length
        for (const p of res.problems) {
          expect(p.line).toBeGreaterThanOrEqual(1)
          expect(p.line).toBeLessThanOrEqual(lineCount)
        }
        db.close()
      }),
      { seed: 2718, numRuns: 150 },
    )
  })
})
