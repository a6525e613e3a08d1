/**
 * readCsv's line numbers and its handling of a quote that is never closed. Every problem names the
 * physical line where its row starts (`\r\n`, `\r` and `\n` each end one line), whatever the line
 * ends, quoted line breaks, blank lines and byte-order mark; a file cut inside a quoted field keeps
 * the rows before the cut and reports the cut row where it starts.
 */
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { requestsFromCsv } from '../../src/ingest/readers.ts'
import { importTableText } from '../../src/inputs/tables.ts'
import { formatProblem, readCsv } from '../../src/util/csv.ts'

/** the lines a row's problem or a kept row is reported on */
function reported(text: string) {
  const r = readCsv(text, 'f.csv', ['id', 'text'])
  return { rows: r.rows.map((x) => x.line), problems: r.problems.map((p) => p.line), fatal: r.fatal }
}

describe('readCsv line numbers', () => {
  // physical lines of a file: header, a good row, a bad row (3 fields), a good row, a bad row (1 field);
  // `quoted` puts line breaks inside quoted fields of both good rows, `blanks` adds blank lines
  const physicalLines = (quoted: boolean, blanks: boolean) => [
    'id,text',
    ...(quoted ? ['a,"one', 'two"'] : ['a,one']),
    ...(blanks ? [''] : []),
    'b,x,y',
    ...(blanks ? [''] : []),
    ...(quoted ? ['c,"three', '', 'four"'] : ['c,three']),
    'd',
  ]
  // expected by counting the lines above by hand
  const EXPECTED = [
    { quoted: false, blanks: false, rows: [2, 4], problems: [3, 5] },
    { quoted: false, blanks: true, rows: [2, 6], problems: [4, 7] },
    { quoted: true, blanks: false, rows: [2, 5], problems: [4, 8] },
    { quoted: true, blanks: true, rows: [2, 7], problems: [5, 10] },
  ]
  for (const eol of ['\n', '\r\n', '\r']) {
    for (const bom of [false, true]) {
      for (const { quoted, blanks, rows, problems } of EXPECTED) {
        const name = `${JSON.stringify(eol)}${bom ? ' + BOM' : ''}${quoted ? ', quoted line breaks' : ''}${blanks ? ', blank lines' : ''}`
        it(`names the line where each row starts: ${name}`, () => {
          const text = (bom ? '\ufeff' : '') + physicalLines(quoted, blanks).join(eol) + eol
          expect(reported(text)).toEqual({ rows, problems, fatal: undefined })
        })
      }
    }
  }

  it('counts a CRLF inside a quoted field as one line (csv-parse counts two)', () => {
    const text = 'id,text\r\n"a","1\r\n2\r\n3"\r\nb,x,y\r\n'
    expect(reported(text).problems).toEqual([5])
  })

  it('rows after a header that follows blank lines and a BOM keep their lines', () => {
    expect(reported('\ufeff\r\n\r\nid,text\r\na,"b\r\n"\r\nc\r\n')).toEqual({ rows: [4], problems: [6], fatal: undefined })
  })

  it('problems of a header after blank lines name the header’s line', () => {
    const missing = readCsv('\r\n\r\nid,txt\r\na,b\r\n', 'f.csv', ['id', 'text'])
    expect(missing.fatal).toEqual({ file: 'f.csv', line: 3, column: 'text', reason: 'missing required column(s); header has: id, txt' })
    // a lone CR in an LF file is a record of one blank cell to the parser: before the header, a blank line
    expect(readCsv('\n\r\nid,txt\na,b\n', 'f.csv', ['id', 'text']).fatal).toMatchObject({ line: 3, column: 'text' })
    expect(readCsv('\n\n\r\n\n', 'f.csv', ['id']).fatal).toEqual({ file: 'f.csv', line: 1, reason: 'empty file (a header row is required)' })
    const unknown = readCsv('\n\nid,text,colour\na,b,c\n', 'f.csv', ['id', 'text'])
    expect(unknown.warnings).toEqual([{ file: 'f.csv', line: 3, column: 'colour', reason: 'unknown column(s) ignored' }])
    expect(unknown.rows.map((r) => r.line)).toEqual([4])
    // a request log passes the warning on as a warning (before, it was dropped), the rows as problems
    const requests = requestsFromCsv('\ntimestamp,text,mood\n2025-01-02,a course please,keen\n2025-01-03\n', 'r.csv')
    expect(requests.rows.map((x) => x.line)).toEqual([3])
    expect(requests.problems.map((p) => [p.line, p.field, p.warning])).toEqual([
      [2, 'mood', true],
      [4, undefined, false],
    ])
  })

  it('a row with a lone CR in an LF file stays on its line', () => {
    expect(reported('id,text\na,b\n\r\nc,d\n')).toEqual({ rows: [2, 4], problems: [3], fatal: undefined })
  })
})

describe('readCsv: a quote that is never closed', () => {
  it('is reported at the line where its row starts, naming the field, not at the last line', () => {
    const r = readCsv('id,text\r\na,1\r\n"b\r\nb",2\r\nc,"cut here\r\nand more\r\nand more', 'f.csv', ['id', 'text'])
    expect(r.fatal).toBeUndefined()
    expect(r.rows.map((x) => [x.line, x.values.id])).toEqual([
      [2, 'a'],
      [3, 'b\r\nb'],
    ])
    expect(r.problems.map(formatProblem)).toEqual(['f.csv:5: not valid CSV: Quote Not Closed: field 2 (text) opens a quote on line 5 that is never closed (the file may be cut short)'])
  })

  it('names the line of the opening quote when the row started earlier', () => {
    const r = readCsv('id,text\n\n"x\ny","open\n', 'f.csv', ['id', 'text'])
    expect(r.problems.map(formatProblem)).toEqual(['f.csv:3: not valid CSV: Quote Not Closed: field 2 (text) opens a quote on line 4 that is never closed (the file may be cut short)'])
  })

  it('skips escaped quotes to find the opening one', () => {
    const r = readCsv('id,text\na,"b"\nc,"d"",e\n""f', 'f.csv', ['id', 'text'])
    expect(r.rows.map((x) => x.values.text)).toEqual(['b'])
    expect(r.problems.map((p) => [p.line, /field 2 \(text\) opens a quote on line 3 /.test(p.reason)])).toEqual([[3, true]])
  })

  it('in the header refuses the file at the header line', () => {
    const r = readCsv('\n"id,text\na,b\n', 'f.csv', ['id', 'text'])
    expect(r.rows).toEqual([])
    expect(r.fatal && formatProblem(r.fatal)).toBe('f.csv:2: not valid CSV: Quote Not Closed: field 1 opens a quote on line 2 that is never closed (the file may be cut short)')
  })

  it('other quoting errors still refuse the file, at the line where the bad row starts', () => {
    const r = readCsv('id,text\r\n"a\r\nb",1\r\nc,d"e\r\n', 'f.csv', ['id', 'text'])
    expect(r.fatal && formatProblem(r.fatal)).toMatch(/^f\.csv:4: not valid CSV: Invalid Opening Quote: /)
  })
})

describe('imports of a file cut inside a quoted field', () => {
  const cut = 'person_id,role,team\r\np1,analyst,north\r\n"p2",engineer,"south\r\nwing"\r\np3,"lead, data\r\nand'

  it('with skip-bad: the rows before the cut are imported and the cut row reported at its line', () => {
    const db = openDb(':memory:')
    const r = importTableText(db, 'people', cut, 'p.csv', { skipBad: true })
    expect(r).toMatchObject({ refused: false, read: 3, imported: 2, skipped: 1 })
    expect(r.problems.map(formatProblem)).toEqual(['p.csv:5: not valid CSV: Quote Not Closed: field 2 (role) opens a quote on line 5 that is never closed (the file may be cut short)'])
    expect(db.prepare('SELECT person_id FROM people ORDER BY person_id').all()).toEqual([{ person_id: 'p1' }, { person_id: 'p2' }])
    db.close()
  })

  it('without skip-bad: the file is refused whole, the problem listed', () => {
    const db = openDb(':memory:')
    const r = importTableText(db, 'people', cut, 'p.csv')
    expect(r).toMatchObject({ refused: true, imported: 0 })
    expect(r.problems.map((p) => p.line)).toEqual([5])
    expect(db.prepare('SELECT COUNT(*) AS n FROM people').get()).toEqual({ n: 0 })
    db.close()
  })

  it('a request log keeps its complete rows and reports the cut one', () => {
    const r = requestsFromCsv('timestamp,text\n2025-01-02,"first\nrequest"\n2025-01-03,"cut', 'r.csv')
    expect(r.fatal).toBeNull()
    expect(r.rows.map((x) => x.line)).toEqual([2])
    expect(r.problems.map((p) => [p.line, p.warning])).toEqual([[4, false]])
  })
})

describe('readCsv line numbers, property', () => {
  const piece = fc.constantFrom('a', 'Zoë', ' ', ',', '"', '\n', '\r\n', '日本')
  const cell = fc.tuple(fc.array(piece, { maxLength: 5 }).map((p) => p.join('')), fc.boolean())
  const write = ([v, forceQuote]: [string, boolean]) => (forceQuote || /[",\r\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v)
  const row = fc.record({ cells: fc.tuple(cell, cell), blanksBefore: fc.constantFrom(0, 0, 0, 1, 2) })
  const file = fc.record({
    rows: fc.array(row, { minLength: 1, maxLength: 8 }),
    eol: fc.constantFrom('\n', '\r\n', '\r'),
    bom: fc.boolean(),
    finalEol: fc.boolean(),
    corruption: fc.constantFrom<'extra field' | 'cut inside a quote'>('extra field', 'cut inside a quote'),
    corruptIndex: fc.nat(),
  })
  /** the physical line of a string offset, counted independently of readCsv (a regular expression) */
  const lineOf = (text: string, offset: number) => text.slice(0, offset).split(/\r\n|\r|\n/).length

  it('every kept row and the corrupted row are reported at their true first line', () => {
    fc.assert(
      fc.property(file, ({ rows, eol, bom, finalEol, corruption, corruptIndex }) => {
        const bad = corruption === 'cut inside a quote' ? rows.length - 1 : corruptIndex % rows.length
        let text = (bom ? '\ufeff' : '') + 'id,text'
        const starts: number[] = []
        let opening = -1
        rows.forEach((r, i) => {
          text += eol + eol.repeat(r.blanksBefore)
          starts.push(text.length)
          const first = write(r.cells[0])
          if (i !== bad) text += `${first},${write(r.cells[1])}`
          else if (corruption === 'extra field') text += `${first},${write(r.cells[1])},surplus`
          else {
            // cut inside the second field's quote: no closing quote, nothing after
            opening = text.length + first.length + 1
            text += `${first},"${r.cells[1][0].replace(/"/g, '""')}`
          }
        })
        if (finalEol && corruption === 'extra field') text += eol
        const result = readCsv(text, 'f.csv', ['id', 'text'])
        expect(result.fatal).toBeUndefined()
        expect(result.rows.map((x) => x.line)).toEqual(starts.filter((_, i) => i !== bad).map((s) => lineOf(text, s)))
        expect(result.problems.map((p) => p.line)).toEqual([lineOf(text, starts[bad]!)])
        if (opening >= 0) expect(result.problems[0]!.reason).toContain(`field 2 (text) opens a quote on line ${lineOf(text, opening)} `)
      }),
      { seed: 20260, numRuns: 300 },
    )
  })
})
