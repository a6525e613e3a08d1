/**
 * @module util/table
 * Plain-text tables for the terminal.
 */

function cell(v: unknown): string {
  if (v === null || v === undefined) return ''
  if (typeof v === 'number') return Number.isInteger(v) ? String(v) : Math.abs(v) >= 100 ? v.toFixed(1) : v.toPrecision(3)
  if (typeof v === 'string') return v.replace(/[\r\n\t]+/g, ' ').slice(0, 60)
  return JSON.stringify(v).slice(0, 60)
}

/** Formats rows as an aligned text table with a header line. */
export function printTable(rows: readonly Record<string, unknown>[], columns: readonly string[]): string {
  if (rows.length === 0) return ''
  const cells = rows.map((r) => columns.map((c) => cell(r[c])))
  const widths = columns.map((c, i) => Math.max(c.length, ...cells.map((row) => row[i]!.length)))
  const line = (values: readonly string[]) => values.map((v, i) => v.padEnd(widths[i]!)).join('  ').trimEnd()
  return [line(columns), line(widths.map((w) => '-'.repeat(w))), ...cells.map(line)].join('\n') + '\n'
}
