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
  /** line number (1-based) where each data row starts, whether it is good, and for a bad value the column it is in */
  rows: { line: number; good: boolean; key: string; column: string | null }[]
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
      // blank lines are skipped, but the lines after them keep their numbers
      blankBefore: fc.constantFrom(0, 0, 0, 0, 1, 2),
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
          let column: string | null = null
          if (r.bad) {
            good = false
            if (r.structural === 'extra') values.push('surplus')
            else if (r.structural === 'missing') values.pop()
            else {
              const [colIndex, v] = bads[i]!
              values[colIndex] = v
              column = cols[colIndex]!
            }
          }
          for (let b = 0; b < r.blankBefore; b++) lines.push('')
          line += r.blankBefore
          const text = values.map(csvCell).join(',')
          lines.push(text)
          planted.push({ line, good, key: values[0]!.trim(), column })
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
    it(`${kind}: planted bad rows are reported by line and column; skip-bad keeps exactly the good rows; otherwise nothing changes`, () => {
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
          // a bad value names its column; a wrong field count names none
          for (const r of bad) {
            const p = strict.problems.find((x) => x.line === r.line)!
            expect(formatProblem(p)).toMatch(new RegExp(`^${kind}\\.csv:${r.line}: ${r.column ? `column ${r.column}: ` : ''}\\S`))
            if (r.column === null) expect(p.reason).toMatch(/^expected \d+ fields, found \d+$/)
          }
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

/** A valid file of each table kind (three rows, the second with a quoted comma) and a text column to damage. */
interface Base {
  kind: TableKind
  header: string[]
  rows: string[][]
  /** a text column (row values without commas in row 1) and its length limit */
  text: string
  max: number
}
const BASES: Record<TableKind, Omit<Base, 'kind'>> = {
  people: { header: ['person_id', 'role', 'team'], rows: [['p1', 'analyst', 'north'], ['p2', 'engineer, senior', 'south'], ['p3', 'analyst', '']], text: 'role', max: 200 },
  roles: { header: ['role', 'skill_id', 'required_theta'], rows: [['analyst', 'sql', '1.5'], ['lead, data', 'python', '0.5'], ['analyst', 'python', '-1']], text: 'role', max: 200 },
  // new item ids: freshDb already holds item-0, item-1 and item-2
  items: { header: ['item_id', 'skill_id', 'a', 'b', 'c'], rows: [['i1', 'sql', '1', '0', ''], ['i2', 'data, privacy', '1.2', '0.5', '0.2'], ['i3', 'python', '0.8', '-1', '']], text: 'skill_id', max: 200 },
  responses: { header: ['person_id', 'item_id', 'response', 'taken_at'], rows: [['p1', 'item-0', '1', '2025-01-02'], ['p2, jr', 'item-1', '0', '2025-01-03T10:00:00Z'], ['p3', 'item-2', '1', '2025-01-04']], text: 'person_id', max: 200 },
  abilities: { header: ['person_id', 'skill_id', 'theta', 'se', 'assessed_at'], rows: [['p1', 'sql', '0.5', '0.3', '2025-01-01'], ['p2', 'data, privacy', '-1', '0.4', '2025-02-01'], ['p3', 'python', '2', '0.25', '2025-03-01']], text: 'skill_id', max: 200 },
  courses: {
    header: ['course_id', 'title', 'skills', 'last_reviewed', 'enrollments_12m', 'owner'],
    rows: [['c1', 'SQL basics', 'sql|python', '2025-01-01', '10', 'north'], ['c2', 'Data, privacy', 'data privacy', '', '', ''], ['c3', 'Kubernetes', 'kubernetes', '2024-06-30', '0', 'ops']],
    text: 'title',
    max: 500,
  },
}

const csvText = (header: string[], rows: string[][]) => [header, ...rows].map((r) => r.map(csvCell).join(',')).join('\n') + '\n'
const baseText = (b: Base) => csvText(b.header, b.rows)
/** the base rows with row `index`'s text column set to `value` */
const withText = (b: Base, index: number, value: (old: string, i: number) => string) => b.rows.map((r, i) => (i === index || index === -1 ? r.map((v, c) => (b.header[c] === b.text ? value(v, i) : v)) : r))

/**
 * Mutations of a valid file: what a broken export, a wrong save dialog or a hostile sender produces,
 * with what the import must then say: `accept` = lands (with skip-bad) with `imported` rows, else the
 * pattern of the problem; `check` adds what the mutation's own rule requires.
 */
const MUTATIONS: Record<
  string,
  { mutate: (b: Base, rnd: number) => string | Buffer; expect: 'accept' | 'any' | ((b: Base) => RegExp); imported?: number; runs?: number; check?: (res: ReturnType<typeof importTableFile>, b: Base, rnd: number) => void }
> = {
  truncated: {
    mutate: (b, r) => baseText(b).slice(0, Math.floor(r * baseText(b).length)),
    expect: 'any',
    runs: 40,
    check: (res, b, r) => {
      const text = baseText(b)
      const cut = Math.floor(r * text.length)
      const prefix = text.slice(0, cut)
      const headerEnd = text.indexOf('\n') + 1
      // rows whose line break is before the cut are complete (no base row spans two lines)
      const complete = prefix.slice(headerEnd).split('\n').length - 1
      const partial = cut >= headerEnd && !prefix.endsWith('\n')
      if (cut < headerEnd) expect(res.imported).toBe(0)
      else if ((prefix.match(/"/g)?.length ?? 0) % 2 === 1) {
        // cut inside a quoted field: the complete rows land, the cut row is reported at its own line
        expect(res).toMatchObject({ refused: false, read: complete + 1, imported: complete, skipped: 1 })
        expect(res.problems.map(formatProblem)).toEqual([expect.stringMatching(new RegExp(`:${complete + 2}: not valid CSV: Quote Not Closed: field \\d+ \\(${b.text}\\) opens a quote on line ${complete + 2} `))])
      } else {
        // every complete row lands; the cut row lands if it is still valid, else it is reported at its line
        expect(res.refused).toBe(false)
        expect(res.read).toBe(complete + (partial ? 1 : 0))
        expect(res.imported).toBeGreaterThanOrEqual(complete)
        expect(res.problems.filter((p) => p.line !== complete + 2)).toEqual([])
      }
    },
  },
  'truncated inside a quote': {
    mutate: (b) => baseText(b) + 'x9,"unclosed value\nstill going',
    expect: () => /:5: not valid CSV: Quote Not Closed: field 2 \(\w+\) opens a quote on line 5 /,
    check: (res) => expect(res).toMatchObject({ refused: false, imported: 3, skipped: 1 }),
  },
  'UTF-16LE with BOM': { mutate: (b) => Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(baseText(b), 'utf16le')]), expect: () => /:1: not valid UTF-8 text/ },
  'UTF-16LE without BOM': { mutate: (b) => Buffer.from(baseText(b), 'utf16le'), expect: () => /:1: mostly NUL bytes: .*UTF-16/ },
  'Latin-1 bytes': { mutate: (b) => Buffer.from(csvText(b.header, withText(b, 0, (v) => `${v}é`)), 'latin1'), expect: () => /:2: not valid UTF-8 text/ },
  'invalid UTF-8 spliced in': {
    mutate: (b, r) => {
      const t = baseText(b)
      return Buffer.concat([Buffer.from(t.slice(0, Math.floor(r * t.length))), Buffer.from([0xc3, 0x28, 0xff, 0x1b]), Buffer.from(t.slice(Math.floor(r * t.length)))])
    },
    expect: () => /not valid UTF-8 text/,
    runs: 25,
  },
  'a NUL byte in one field': { mutate: (b) => csvText(b.header, withText(b, 0, (v) => `${v.slice(0, 1)}\u0000${v.slice(1)}`)), expect: (b) => new RegExp(`:2: column ${b.text}: contains control characters`) },
  'control characters in every text field': {
    mutate: (b) => csvText(b.header, withText(b, -1, (v) => `${v}\u0007\u001b[2J`)),
    expect: (b) => new RegExp(`^(.*:[234]: column ${b.text}: contains control characters\\n?){3}$`),
  },
  'CRLF line ends': { mutate: (b) => baseText(b).replace(/\n/g, '\r\n'), expect: 'accept', imported: 3 },
  'lone CR line ends': { mutate: (b) => baseText(b).replace(/\n/g, '\r'), expect: 'accept', imported: 3 },
  'blank lines, then a bad row': {
    // header 1, blank 2-3, rows 4-6, blank 7-8, the bad row at 9
    mutate: (b) => {
      const lines = baseText(b).trimEnd().split('\n')
      return [lines[0], '', '', ...lines.slice(1), '', '', withText(b, 0, () => '')[0]!.map(csvCell).join(',')].join('\n') + '\n'
    },
    expect: (b) => new RegExp(`:9: column ${b.text}: is empty`),
    check: (res) => expect(res).toMatchObject({ refused: false, imported: 3, skipped: 1 }),
  },
  [`huge field (4 MB)`]: {
    mutate: (b) => baseText(b) + withText(b, 0, () => 'r'.repeat(4 * 1024 * 1024))[0]!.map((v, c) => (c === 0 ? `${v}-huge` : v)).join(',') + '\n',
    expect: (b) => new RegExp(`:5: column ${b.text}: is longer than ${b.max} characters`),
    check: (res) => expect(res).toMatchObject({ refused: false, imported: 3, skipped: 1 }),
  },
  '20,000 columns': { mutate: (b) => baseText(b) + Array.from({ length: 20_000 }, (_, i) => `c${i}`).join(',') + '\n', expect: (b) => new RegExp(`:5: expected ${b.header.length} fields, found 20000`) },
  'header only': { mutate: (b) => b.header.join(',') + '\n', expect: 'accept', imported: 0 },
  'BOM then header': { mutate: (b) => '\ufeff' + baseText(b), expect: 'accept', imported: 3 },
  'empty file': { mutate: () => '', expect: () => /:1: empty file/ },
  'only blank lines': { mutate: () => '\n\n\r\n\n', expect: (b) => new RegExp(`:1: (empty file|column ${tableColumns(b.kind).required.join(', ')}: missing required column)`) },
  'header of a different kind': {
    mutate: (b) => baseText({ kind: b.kind, ...BASES[b.kind === 'items' ? 'people' : 'items'] }),
    expect: (b) => {
      const other = BASES[b.kind === 'items' ? 'people' : 'items'].header
      return new RegExp(`:1: column ${tableColumns(b.kind).required.filter((c) => !other.includes(c)).join(', ')}: missing required column`)
    },
  },
  'formula cells everywhere': { mutate: (b) => csvText(b.header, withText(b, -1, (_v, i) => `=cmd|' /C calc'!A${i}`)), expect: 'accept', imported: 3 },
  // RFC 4180 forbids a quote inside an unquoted field; the parser refuses the file at that line
  'a quote in the middle of a field': {
    mutate: (b) => [b.header.join(','), ...withText(b, 0, (v) => `${v.slice(0, 1)}"${v.slice(1)}`).map((r, i) => (i === 0 ? r.join(',') : r.map(csvCell).join(',')))].join('\n') + '\n',
    expect: () => /:2: not valid CSV: Invalid Opening Quote/,
  },
  'binary garbage': {
    mutate: (_b, r) => Buffer.from(Array.from({ length: 512 }, (_, i) => Math.floor(Math.abs(Math.sin(r * 1000 + i)) * 256))),
    expect: 'any',
    runs: 25,
  },
}

describe('table import files under mutation: no crash, no hang, a clear error', () => {
  for (const kind of TABLE_KINDS) {
    const base: Base = { kind, ...BASES[kind] }
    const { table } = TABLE_OF[kind]
    for (const [name, { mutate, expect: expected, imported, runs, check }] of Object.entries(MUTATIONS)) {
      it(`${kind}: ${name}`, () => {
        fc.assert(
          fc.property(fc.double({ min: 0, max: 1, noNaN: true }), (r) => {
            const file = path.join(tmp, `${kind}-${name.replace(/\W+/g, '-')}.csv`)
            fs.writeFileSync(file, mutate(base, r))
            const db = freshDb()
            const before = contentHash(db)
            const rowsBefore = count(db, table)
            let result: ReturnType<typeof importTableFile> | undefined
            expect(() => (result = importTableFile(db, kind, file, { skipBad: true }))).not.toThrow()
            const res = result!
            const messages = res.problems.map(formatProblem)
            if (expected === 'accept') expect(res).toMatchObject({ refused: false, imported, skipped: 0 })
            else if (expected !== 'any') expect(messages.join('\n')).toMatch(expected(base))
            check?.(res, base, r)
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
              expect(count(db, table) - rowsBefore).toBe(res.imported)
              expect(res.imported + res.skipped).toBe(res.read)
            }
            db.close()
          }),
          { seed: 777 + TABLE_KINDS.indexOf(kind), numRuns: runs ?? 1 },
        )
      })
    }
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
