/**
 * @module taxonomy/commands
 * What `tides map` prints, built from the taxonomy functions (`tides report candidates`: see
 * candidates-report.ts). The CLI only parses arguments and calls these.
 */
import fs from 'node:fs'
import type { Db } from '../db/connection.ts'
import { conceptCount } from '../db/taxonomy.ts'
import { htmlToText } from '../ingest/text.ts'
import type { DocumentMapping, MapInput, Matcher } from './matcher.ts'
import { shippedMatcher } from './index.ts'
import { matcherFromDb } from './store.ts'

/** The matcher `tides map` uses: the stored taxonomy when the database has one, else the shipped one. */
export function matcherForCommand(db: Db | undefined): { matcher: Matcher; taxonomy: 'database' | 'shipped' } {
  if (db && conceptCount(db) > 0) return { matcher: matcherFromDb(db), taxonomy: 'database' }
  return { matcher: shippedMatcher().matcher, taxonomy: 'shipped' }
}

export interface MappedDocumentJson {
  id?: string
  line?: number
  title?: string
  skills: {
    id: string
    label: string
    type: string
    count: number
    firstOffset: number
    spans: { start: number; end: number; text: string; label: string; field: string; via: string }[]
  }[]
  rollups: { id: string; label: string; via: string[] }[]
  rejected?: { id: string; label: string; start: number; end: number; text: string; field: string; reason: string }[]
}

/** The JSON shape of one mapped document: matched concept ids, labels and spans, rollups apart. */
export function mappingJson(m: DocumentMapping, extra: { id?: string; line?: number; title?: string } = {}): MappedDocumentJson {
  return {
    ...extra,
    skills: m.mentions.map((x) => ({ id: x.conceptId, label: x.prefLabel, type: x.type, count: x.count, firstOffset: x.firstOffset, spans: x.spans })),
    rollups: m.rollups.map((r) => ({ id: r.conceptId, label: r.prefLabel, via: r.via })),
    ...(m.rejected ? { rejected: m.rejected.map((r) => ({ id: r.conceptId, label: r.label, start: r.start, end: r.end, text: r.text, field: r.field, reason: r.reason })) } : {}),
  }
}

/** One line per skill for people: `id  label  ×count  "span", "span"`, then the rollups. */
export function mappingText(doc: MappedDocumentJson): string {
  const lines: string[] = []
  if (doc.id !== undefined || doc.title) lines.push(`# ${[doc.id, doc.title].filter(Boolean).join(' — ')}`)
  for (const s of doc.skills) lines.push(`${s.id}\t${s.label}\t×${s.count}\t${s.spans.map((x) => `"${x.text}"${x.via === 'stem' ? '~' : ''}@${x.start}`).join(', ')}`)
  if (doc.skills.length === 0) lines.push('(no skills matched)')
  if (doc.rollups.length) lines.push(`rollup: ${doc.rollups.map((r) => `${r.id} (via ${r.via.join(', ')})`).join('; ')}`)
  for (const r of doc.rejected ?? []) lines.push(`not matched: "${r.text}"@${r.start} as ${r.id} (${r.reason})`)
  return lines.join('\n') + '\n'
}

export interface JsonlProblem {
  file: string
  line: number
  reason: string
}

/** Reads postings from JSON Lines (schema.org JobPosting objects); bad lines are reported and skipped. */
export function readPostingLines(file: string): { docs: { line: number; id?: string; title?: string; input: MapInput }[]; problems: JsonlProblem[] } {
  const text = fs.readFileSync(file, 'utf8')
  const docs: { line: number; id?: string; title?: string; input: MapInput }[] = []
  const problems: JsonlProblem[] = []
  text.split(/\r?\n/).forEach((raw, i) => {
    const line = i + 1
    if (!raw.trim()) return
    let obj: unknown
    try {
      obj = JSON.parse(raw)
    } catch (err) {
      problems.push({ file, line, reason: `not JSON: ${(err as Error).message}` })
      return
    }
    if (!obj || typeof obj !== 'object' || Array.isArray(obj)) {
      problems.push({ file, line, reason: 'not a JSON object' })
      return
    }
    const o = obj as Record<string, unknown>
    const title = typeof o['title'] === 'string' ? o['title'] : ''
    const description = typeof o['description'] === 'string' ? htmlToText(o['description']) : typeof o['text'] === 'string' ? o['text'] : ''
    if (!title && !description && o['skills'] === undefined) {
      problems.push({ file, line, reason: 'no title, description, text or skills to map' })
      return
    }
    const ident = o['identifier']
    const id = typeof ident === 'string' || typeof ident === 'number' ? String(ident) : ident && typeof ident === 'object' && 'value' in ident ? String((ident as { value: unknown }).value) : undefined
    docs.push({
      line,
      ...(id !== undefined ? { id } : {}),
      ...(title ? { title } : {}),
      input: { text: title ? `${title}\n${description}` : description, ...(o['skills'] !== undefined ? { skills: o['skills'] } : {}) },
    })
  })
  return { docs, problems }
}
