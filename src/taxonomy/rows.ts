/**
 * @module taxonomy/rows
 * A document's mapping as the rows the mentions table stores (presence per concept mentioned, via
 * `text` or `skills`; not the broader concepts of the matcher's roll-up, which the counts derive
 * from the taxonomy's links, db/ancestry.ts), and a compact integer encoding of them that worker
 * threads send back without cloning thousands of small objects.
 */
import type { DocumentToMap } from '../db/taxonomy.ts'
import type { MapInput, Matcher } from './matcher.ts'

export interface MentionRow {
  conceptId: string
  count: number
  firstOffset: number | null
  via: 'text' | 'skills'
}

/** The mention rows a document is stored with: its mentions, mapped without spans and without the roll-up list. */
export function storedRows(matcher: Matcher, input: MapInput): MentionRow[] {
  const { mentions } = matcher.map(input, { spans: false, rollups: false })
  return mentions.map((m) => ({ conceptId: m.conceptId, count: m.count, firstOffset: m.via === 'text' ? m.firstOffset : null, via: m.via }))
}

/** The text a document is mapped as: its title, a line break, its body. Offsets refer to this. */
export function documentInput(d: Pick<DocumentToMap, 'title' | 'body' | 'skills_json'>): MapInput {
  let skills: unknown
  if (d.skills_json) {
    try {
      skills = JSON.parse(d.skills_json)
    } catch {
      skills = d.skills_json
    }
  }
  return { text: d.title ? `${d.title}\n${d.body}` : d.body, ...(skills !== undefined ? { skills } : {}) }
}

const VIA = ['text', 'skills'] as const

/**
 * Encodes the rows of several documents as one Int32Array:
 * [documents, then per document: rows, then per row: concept index, count, first offset or -1, via].
 */
export function encodeRows(matcher: Matcher, docs: readonly MentionRow[][]): Int32Array {
  let size = 1
  for (const rows of docs) size += 1 + rows.length * 4
  const out = new Int32Array(size)
  let at = 0
  out[at++] = docs.length
  for (const rows of docs) {
    out[at++] = rows.length
    for (const r of rows) {
      out[at++] = matcher.conceptIndexOf(r.conceptId)
      out[at++] = r.count
      out[at++] = r.firstOffset ?? -1
      out[at++] = VIA.indexOf(r.via)
    }
  }
  return out
}

/** Decodes `encodeRows` output; `conceptIds` is the taxonomy's concept list in the same order. */
export function decodeRows(data: Int32Array, conceptIds: readonly string[]): MentionRow[][] {
  const docs: MentionRow[][] = []
  let at = 0
  const n = data[at++]!
  for (let d = 0; d < n; d++) {
    const rows: MentionRow[] = []
    const k = data[at++]!
    for (let i = 0; i < k; i++) {
      const ci = data[at++]!
      const count = data[at++]!
      const first = data[at++]!
      const via = VIA[data[at++]!]!
      rows.push({ conceptId: conceptIds[ci]!, count, firstOffset: first < 0 ? null : first, via })
    }
    docs.push(rows)
  }
  return docs
}
