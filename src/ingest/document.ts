/**
 * @module ingest/document
 * What every reader (feed, JobPosting JSON Lines, request log) produces: a document ready for
 * dedupe and storage, or a problem saying which line or item could not be read and why.
 */

export type DocumentKind = 'posting' | 'request'

export interface DocumentInput {
  /** unique within its source: guid/id, identifier, link, or a content hash */
  externalId: string
  kind: DocumentKind
  title: string
  /** plain text (HTML already stripped) */
  body: string
  /** ISO 8601 UTC */
  postedAt: string
  /** true when the item carried no usable date and the fetch time stands in for it */
  dateEstimated: boolean
  occupation?: string | null
  organisation?: string | null
  location?: string | null
  channel?: string | null
  team?: string | null
  /** schema.org JobPosting `skills`, as written */
  skills?: readonly string[] | null
}

/** One item or row that was not stored (or stored with a caveat, when `warning`). */
export interface ItemProblem {
  /** file or URL */
  file: string
  /** 1-based line, when the input has lines */
  line?: number
  /** the item's id when known (feeds) */
  item?: string
  field?: string
  reason: string
  /** true for a caveat on a stored item (e.g. estimated date), false/absent for a rejected one */
  warning?: boolean
}

export function formatItemProblem(p: ItemProblem): string {
  const where = [p.file, p.line !== undefined ? String(p.line) : null].filter(Boolean).join(':')
  return `${where}${p.item ? ` (item ${p.item})` : ''}${p.field ? `: field ${p.field}` : ''}: ${p.reason}`
}

/** Field limits: longer values are rejected (with the reason) rather than cut silently. */
export const LIMITS = {
  title: 1_000,
  externalId: 1_000,
  shortField: 500,
  skills: 200,
} as const

/** A bad item: the reader throws this and the caller records it against the line or item. */
export class ItemError extends Error {
  constructor(
    readonly field: string | undefined,
    reason: string,
  ) {
    super(reason)
    this.name = 'ItemError'
  }
}

/** Checks the shared invariants of a document before it goes to storage. */
export function checkDocument(doc: DocumentInput, maxTextChars: number): void {
  if (doc.externalId.length === 0) throw new ItemError('id', 'is empty')
  if (doc.externalId.length > LIMITS.externalId) throw new ItemError('id', `is longer than ${LIMITS.externalId} characters`)
  if (doc.title.length > LIMITS.title) throw new ItemError('title', `is longer than ${LIMITS.title} characters`)
  if (doc.body.length > maxTextChars) throw new ItemError(doc.kind === 'request' ? 'text' : 'description', `is longer than ${maxTextChars} characters (ingest.maxTextChars)`)
  if (doc.title.trim() === '' && doc.body.trim() === '') throw new ItemError(doc.kind === 'request' ? 'text' : 'description', 'no text: title and description are both empty')
  for (const [field, value] of [['occupation', doc.occupation], ['organisation', doc.organisation], ['location', doc.location], ['channel', doc.channel], ['team', doc.team]] as const) {
    if (value && value.length > LIMITS.shortField) throw new ItemError(field, `is longer than ${LIMITS.shortField} characters`)
  }
}
