/**
 * Test helper: the shipped taxonomy's labels and broader links, and a deliberately simple label
 * scanner (word-bounded, case-sensitive for labels of three characters or fewer) that the demo tests
 * use to check that text mentions exactly the skills the generator says it does.
 */
import fs from 'node:fs'
import { parse } from 'csv-parse/sync'

export interface TaxonomyRow {
  id: string
  prefLabel: string
  altLabels: string[]
  hiddenLabels: string[]
  broader: string[]
}

const FILE = new URL('../../taxonomy/skills.csv', import.meta.url)

export function loadTaxonomy(): Map<string, TaxonomyRow> {
  const rows = parse(fs.readFileSync(FILE, 'utf8'), { columns: true, skip_empty_lines: true }) as Record<string, string>[]
  const split = (v: string | undefined) => (v ?? '').split('|').map((s) => s.trim()).filter(Boolean)
  return new Map(
    rows.map((r) => [r['id']!, { id: r['id']!, prefLabel: r['prefLabel']!, altLabels: split(r['altLabel']), hiddenLabels: split(r['hiddenLabel']), broader: split(r['broader']) }]),
  )
}

export function allLabels(row: TaxonomyRow): string[] {
  return [row.prefLabel, ...row.altLabels, ...row.hiddenLabels]
}

/** Every concept above `id` (transitively). */
export function ancestors(tax: Map<string, TaxonomyRow>, id: string): Set<string> {
  const out = new Set<string>()
  const stack = [...(tax.get(id)?.broader ?? [])]
  while (stack.length) {
    const b = stack.pop()!
    if (out.has(b)) continue
    out.add(b)
    stack.push(...(tax.get(b)?.broader ?? []))
  }
  return out
}

function escapeRegExp(s: string): string {
  return s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')
}

/** A regular expression that finds any of the labels as a whole word or phrase. */
export function labelPattern(labels: readonly string[]): { short: RegExp | null; long: RegExp | null } {
  const short = labels.filter((l) => l.length <= 3)
  const long = labels.filter((l) => l.length > 3)
  const build = (ls: string[], flags: string) =>
    ls.length ? new RegExp(`(?<![A-Za-z0-9])(?:${ls.sort((a, b) => b.length - a.length).map(escapeRegExp).join('|')})(?![A-Za-z0-9])`, flags) : null
  return { short: build(short, ''), long: build(long, 'i') }
}

/** A scanner that reports which of the given concepts a text mentions. */
export function conceptScanner(tax: Map<string, TaxonomyRow>, ids: readonly string[]): (text: string) => string[] {
  const patterns = ids.map((id) => {
    const row = tax.get(id)
    if (!row) throw new Error(`concept ${id} is not in the taxonomy`)
    return { id, ...labelPattern(allLabels(row)) }
  })
  return (text) => patterns.filter((p) => (p.short?.test(text) ?? false) || (p.long?.test(text) ?? false)).map((p) => p.id)
}
