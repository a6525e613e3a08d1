/**
 * @module db/mention-lists
 * A narrow copy of the direct mentions, one row per document: `mention_lists` (kind, month,
 * document id, and the document's directly mentioned concepts, not its roll-ups, as a blob of
 * small integer codes), clustered on (kind, month, document id), so that the plan reads a window of
 * postings' concept lists as a range of short rows instead of every mention row of every document
 * (about 10 million at a million postings, with their roll-ups). `concept_codes` numbers the
 * concept ids; its codes are only ever appended (an explicit INTEGER PRIMARY KEY, kept by VACUUM).
 *
 * Invariant: for every document with at least one direct mention, one row whose codes are exactly
 * those concepts; no row for any other document. Every writer that changes a document's mentions
 * keeps it in the same transaction: the map (saveMappings), a taxonomy replacement (all cleared),
 * a document marked a repost or made an original again (its mentions dropped), and a deleted
 * document (a trigger, as its mentions go by the foreign key's cascade).
 * {@link rebuildMentionLists} recomputes the table from the mentions (the migration's fill; tests,
 * repair).
 *
 * Codes: unsigned LEB128 varints (7 bits a byte, the high bit set on every byte but the last), so a
 * code is never a zero byte and a zero byte can separate documents when rows are concatenated.
 * Reference: https://en.wikipedia.org/wiki/LEB128
 *
 * @example
 * ```ts
 * encodeCodes([5, 300]) // => <Buffer 05 ac 02>
 * decodeCodes(encodeCodes([5, 300])) // => [5, 300]
 * ```
 */
import type { Statement } from 'better-sqlite3'
import type { Db } from './connection.ts'

const statements = new WeakMap<Db, Map<string, Statement>>()
/** A prepared statement kept per connection (the map writes a row per document). */
function stmt(db: Db, sql: string): Statement {
  let m = statements.get(db)
  if (!m) statements.set(db, (m = new Map()))
  let s = m.get(sql)
  if (!s) m.set(sql, (s = db.prepare(sql)))
  return s
}

/** A code as a varint of hex digits, in SQL (codes below 2^28: 268 million concepts). */
const SQL_VARINT_HEX = (code: string) => `CASE WHEN ${code} < 128 THEN printf('%02X', ${code})
  WHEN ${code} < 16384 THEN printf('%02X%02X', (${code} & 127) | 128, ${code} >> 7)
  WHEN ${code} < 2097152 THEN printf('%02X%02X%02X', (${code} & 127) | 128, ((${code} >> 7) & 127) | 128, ${code} >> 14)
  ELSE printf('%02X%02X%02X%02X', (${code} & 127) | 128, ((${code} >> 7) & 127) | 128, ((${code} >> 14) & 127) | 128, ${code} >> 21) END`

/**
 * Fills `concept_codes` with every concept and `mention_lists` from the stored mentions (the table
 * must be empty). The same statements as migration 7's fill.
 */
export const FILL_MENTION_LISTS = `
INSERT OR IGNORE INTO concept_codes (concept_id) SELECT id FROM concepts ORDER BY id;
INSERT INTO mention_lists (kind, month, document_id, codes)
  SELECT d.kind, d.month, l.document_id, l.codes FROM (
    SELECT m.document_id, unhex(group_concat(${SQL_VARINT_HEX('c.code')}, '' ORDER BY m.concept_id)) AS codes
    FROM mentions m JOIN concept_codes c ON c.concept_id = m.concept_id
    WHERE m.via <> 'rollup' GROUP BY m.document_id) l
  JOIN documents d ON d.id = l.document_id
  ORDER BY d.kind, d.month, l.document_id;
`

/** Recomputes `mention_lists` from the mentions (codes already given are kept). Call inside a transaction. */
export function rebuildMentionLists(db: Db): void {
  db.exec('DELETE FROM mention_lists')
  db.exec(FILL_MENTION_LISTS)
}

/** Codes as unsigned LEB128 varints, in the order given. */
export function encodeCodes(codes: readonly number[]): Buffer {
  const out = Buffer.allocUnsafe(codes.length * 4)
  return out.subarray(0, encodeInto(out, codes))
}

/** Writes the codes' varints at the start of `out` (4 bytes a code at most). @returns the bytes written */
function encodeInto(out: Buffer, codes: readonly number[]): number {
  let n = 0
  for (let c of codes) {
    if (!Number.isInteger(c) || c <= 0 || c >= 2 ** 28) throw new RangeError(`encodeCodes: code ${c} is outside 1..2^28-1`)
    while (c >= 128) {
      out[n++] = (c & 127) | 128
      c >>>= 7
    }
    out[n++] = c
  }
  return n
}

/**
 * Concept id by code (`concept_codes`), as a dense array (fast to index); codes of concepts not in
 * `wanted` (when given) are left undefined.
 */
export function conceptsByCode(db: Db, wanted: ReadonlySet<string> | null): (string | undefined)[] {
  const codes = db.prepare('SELECT code, concept_id FROM concept_codes').raw().all() as [number, string][]
  let maxCode = 0
  for (const [code] of codes) if (code > maxCode) maxCode = code
  const byCode = new Array<string | undefined>(maxCode + 1).fill(undefined)
  for (const [code, id] of codes) if (!wanted || wanted.has(id)) byCode[code] = id
  return byCode
}

/** The codes of one blob written by {@link encodeCodes}. */
export function decodeCodes(blob: Uint8Array): number[] {
  const out: number[] = []
  let code = 0
  let shift = 0
  for (const x of blob) {
    code |= (x & 127) << shift
    if (x & 128) shift += 7
    else {
      out.push(code)
      code = 0
      shift = 0
    }
  }
  return out
}

/** A connection's copy of `concept_codes`, and the last row it has seen (to tell when it is stale). */
interface CodeCache {
  codes: Map<string, number>
  lastCode: number
  lastId: string | undefined
}
const caches = new WeakMap<Db, CodeCache>()

/**
 * The code of every concept id, adding the missing ones to `concept_codes`. The connection keeps the
 * table in memory; codes are only appended, so the last row tells whether another connection (or a
 * rolled-back transaction) has changed it since, and the copy is read again then.
 */
export function conceptCodes(db: Db, ids: Iterable<string>): Map<string, number> {
  const last = stmt(db, 'SELECT code, concept_id FROM concept_codes ORDER BY code DESC LIMIT 1').raw().get() as [number, string] | undefined
  let cache = caches.get(db)
  if (!cache || cache.lastCode !== (last?.[0] ?? 0) || cache.lastId !== last?.[1]) {
    const rows = db.prepare('SELECT concept_id, code FROM concept_codes').raw().all() as [string, number][]
    cache = { codes: new Map(rows), lastCode: last?.[0] ?? 0, lastId: last?.[1] }
    caches.set(db, cache)
  }
  for (const id of ids) {
    if (cache.codes.has(id)) continue
    const code = Number(stmt(db, 'INSERT INTO concept_codes (concept_id) VALUES (?)').run(id).lastInsertRowid)
    cache.codes.set(id, code)
    cache.lastCode = code
    cache.lastId = id
  }
  return cache.codes
}

/**
 * A writer of documents' rows for a batch whose direct concepts are among `concepts` (coded here,
 * once): `write(kind, month, id, direct)` stores a document's row, or removes it when `direct`, its
 * directly mentioned concepts, is empty.
 */
export function mentionListWriter(db: Db, concepts: Iterable<string>): (kind: string, month: string, documentId: number, direct: readonly string[]) => void {
  const codes = conceptCodes(db, concepts)
  const upsert = stmt(db, 'INSERT OR REPLACE INTO mention_lists (kind, month, document_id, codes) VALUES (?, ?, ?, ?)')
  // one buffer for the batch: SQLite copies a bound blob
  let scratch = Buffer.allocUnsafe(256)
  const coded: number[] = []
  return (kind, month, documentId, direct) => {
    if (direct.length === 0) {
      deleteMentionList(db, kind, month, documentId)
      return
    }
    coded.length = 0
    for (const id of direct) coded.push(codes.get(id) ?? missingCode(id))
    if (scratch.length < coded.length * 4) scratch = Buffer.allocUnsafe(coded.length * 8)
    upsert.run(kind, month, documentId, scratch.subarray(0, encodeInto(scratch, coded)))
  }
}

function missingCode(id: string): never {
  throw new Error(`mention lists: concept ${id} has no code (it was not among the writer's concepts)`)
}

/** Removes a document's row (its mentions were deleted). */
export function deleteMentionList(db: Db, kind: string, month: string, documentId: number): void {
  stmt(db, 'DELETE FROM mention_lists WHERE kind = ? AND month = ? AND document_id = ?').run(kind, month, documentId)
}

/** Removes every row (every mention was deleted). */
export function clearMentionLists(db: Db): void {
  stmt(db, 'DELETE FROM mention_lists').run()
}

/**
 * Every row as document id -> its concept ids (in stored order), for checks against the mentions.
 */
export function readMentionLists(db: Db): Map<number, { kind: string; month: string; concepts: string[] }> {
  const byCode = new Map((db.prepare('SELECT code, concept_id FROM concept_codes').raw().all() as [number, string][]))
  const out = new Map<number, { kind: string; month: string; concepts: string[] }>()
  for (const [kind, month, id, blob] of db.prepare('SELECT kind, month, document_id, codes FROM mention_lists').raw().iterate() as IterableIterator<[string, string, number, Buffer]>) {
    out.set(id, { kind, month, concepts: decodeCodes(blob).map((c) => byCode.get(c) ?? `?${c}`) })
  }
  return out
}
