/**
 * @module taxonomy/csv-loader
 * Reads a taxonomy CSV (`id,prefLabel,altLabel,hiddenLabel,broader,type`; `altLabel`, `hiddenLabel`
 * and `broader` split on `|`) into concept records, keeping every good row and reporting every bad
 * one with its file, line and field. Cross-row checks (unknown broader ids, cycles, duplicate
 * labels) are the validator's job.
 */
import { parse } from 'csv-parse/sync'
import type { ConceptRecord, Problem, SkillType } from './types.ts'

export const CSV_COLUMNS = ['id', 'prefLabel', 'altLabel', 'hiddenLabel', 'broader', 'type'] as const
const REQUIRED_COLUMNS = ['id', 'prefLabel'] as const

export interface RecordsResult {
  records: ConceptRecord[]
  problems: Problem[]
}

interface ParsedRow {
  record: Record<string, string | undefined>
  info: { lines: number }
  raw: string
}

/** Splits a `|`-separated cell, trimming parts and dropping empty ones. */
export function splitCell(cell: string | undefined): string[] {
  if (!cell) return []
  return cell.split('|').map((s) => s.trim()).filter((s) => s.length > 0)
}

/**
 * Parses taxonomy CSV text.
 * @param text the file's content
 * @param file the name used in problems
 * @example
 * parseTaxonomyCsv('id,prefLabel,altLabel,hiddenLabel,broader,type\ngo,Go,Golang,,,hard\n', 'x.csv').records[0].altLabels
 * // => ['Golang']
 */
export function parseTaxonomyCsv(text: string, file: string): RecordsResult {
  const problems: Problem[] = []
  const records: ConceptRecord[] = []
  const headerLine = firstNonEmptyLine(text)
  let header: string[]
  try {
    header = (parse(text, { to_line: headerLine, bom: true, skip_empty_lines: true }) as string[][])[0] ?? []
  } catch (err) {
    problems.push({ file, line: headerLine, message: `unreadable header: ${(err as Error).message}`, severity: 'error' })
    return { records, problems }
  }
  header = header.map((h) => h.trim())
  for (const col of REQUIRED_COLUMNS) {
    if (!header.includes(col)) {
      problems.push({ file, line: headerLine, field: col, message: `missing required column (expected ${CSV_COLUMNS.join(',')})`, severity: 'error' })
    }
  }
  if (problems.length > 0) return { records, problems }
  for (const h of header) {
    if (!(CSV_COLUMNS as readonly string[]).includes(h)) {
      problems.push({ file, line: headerLine, field: h, message: 'unknown column ignored', severity: 'warning' })
    }
  }

  const rows = parse(text, {
    columns: header,
    from_line: headerLine + 1,
    bom: true,
    info: true,
    raw: true,
    skip_empty_lines: true,
    skip_records_with_error: true,
    on_skip: (err) => {
      const line = (err as { lines?: number } | undefined)?.lines ?? 0
      problems.push({ file, line, message: `unreadable row skipped: ${err?.message ?? 'parse error'}`, severity: 'error' })
      return undefined
    },
  }) as unknown as ParsedRow[]

  const seen = new Map<string, number>()
  for (const row of rows) {
    const newlines = (row.raw.replace(/\r?\n$/, '').match(/\n/g) ?? []).length
    const line = row.info.lines - newlines
    const get = (k: string) => (row.record[k] ?? '').trim()
    const id = get('id')
    const prefLabel = get('prefLabel')
    if (!id) {
      problems.push({ file, line, field: 'id', message: 'empty id; row skipped', severity: 'error' })
      continue
    }
    if (/[\s|]/.test(id)) {
      problems.push({ file, line, field: 'id', message: `id "${id}" contains whitespace or "|"; row skipped`, severity: 'error' })
      continue
    }
    if (!prefLabel) {
      problems.push({ file, line, field: 'prefLabel', message: `concept "${id}" has no prefLabel; row skipped`, severity: 'error' })
      continue
    }
    const previous = seen.get(id)
    if (previous !== undefined) {
      problems.push({ file, line, field: 'id', message: `duplicate id "${id}" (first on line ${previous}); row skipped`, severity: 'error' })
      continue
    }
    const rawType = get('type').toLowerCase()
    let type: SkillType = 'hard'
    if (rawType === 'soft' || rawType === 'hard') type = rawType
    else if (rawType === '') {
      problems.push({ file, line, field: 'type', message: `concept "${id}" has no type; taken as hard`, severity: 'warning' })
    } else {
      problems.push({ file, line, field: 'type', message: `type "${get('type')}" is neither hard nor soft; row skipped`, severity: 'error' })
      continue
    }
    seen.set(id, line)
    records.push({
      id,
      prefLabel,
      altLabels: splitCell(row.record['altLabel']),
      hiddenLabels: splitCell(row.record['hiddenLabel']),
      broader: splitCell(row.record['broader']),
      type,
      source: { file, line },
    })
  }
  problems.sort((a, b) => a.line - b.line)
  return { records, problems }
}

function firstNonEmptyLine(text: string): number {
  const lines = text.split('\n')
  for (let i = 0; i < lines.length; i++) if ((lines[i] ?? '').trim() !== '') return i + 1
  return 1
}
