/**
 * @module db/documents
 * SQL for sources, documents, their LSH band keys, and webhook deliveries. The ingest stage and the
 * webhook sender call these plain functions; no SQL lives outside src/db/.
 */
import type { Statement } from 'better-sqlite3'
import type { Db } from './connection.ts'
import { countedConcepts } from './ancestry.ts'
import { DemandDelta, isMapped } from './curves.ts'
import { deleteMentionList } from './mention-lists.ts'

// ------------------------------------------------------------------------------------------------
// sources

export interface SourceRow {
  id: string
  kind: 'feed' | 'jsonl' | 'requests' | 'folder' | 'import'
  location: string
  schedule: string | null
  options_json: string
  etag: string | null
  last_modified: string | null
  cursor: string | null
  created_at: string
}

export interface SourceDefinition {
  id: string
  kind: SourceRow['kind']
  location: string
  schedule?: string | null
  options?: Record<string, unknown>
}

/**
 * Creates or updates a source row from its definition. A changed kind or location starts the
 * source afresh (validators and cursor cleared); its documents stay.
 */
export function upsertSource(db: Db, def: SourceDefinition): SourceRow {
  const current = getSource(db, def.id)
  const options = JSON.stringify(def.options ?? {})
  if (!current) {
    db.prepare('INSERT INTO sources(id, kind, location, schedule, options_json) VALUES (?, ?, ?, ?, ?)').run(def.id, def.kind, def.location, def.schedule ?? null, options)
  } else if (current.kind !== def.kind || current.location !== def.location) {
    db.prepare('UPDATE sources SET kind = ?, location = ?, schedule = ?, options_json = ?, etag = NULL, last_modified = NULL, cursor = NULL WHERE id = ?').run(
      def.kind, def.location, def.schedule ?? null, options, def.id,
    )
  } else if (current.schedule !== (def.schedule ?? null) || current.options_json !== options) {
    db.prepare('UPDATE sources SET schedule = ?, options_json = ? WHERE id = ?').run(def.schedule ?? null, options, def.id)
  }
  return getSource(db, def.id)!
}

export function getSource(db: Db, id: string): SourceRow | undefined {
  return db.prepare('SELECT * FROM sources WHERE id = ?').get(id) as SourceRow | undefined
}

export function listSources(db: Db): SourceRow[] {
  return db.prepare('SELECT * FROM sources ORDER BY id').all() as SourceRow[]
}

/** Stores the source's resume point; call inside the batch transaction. */
export function setSourceCursor(db: Db, id: string, cursor: string | null): void {
  db.prepare('UPDATE sources SET cursor = ? WHERE id = ?').run(cursor, id)
}

/** Stores the HTTP validators of the last complete fetch (for conditional requests). */
export function setSourceValidators(db: Db, id: string, etag: string | null, lastModified: string | null): void {
  db.prepare('UPDATE sources SET etag = ?, last_modified = ? WHERE id = ?').run(etag, lastModified, id)
}

// ------------------------------------------------------------------------------------------------
// documents

/** A band key's band is its high part as stored: band * 2^32 + key (exact in a double, below 2^53). */
export const BAND_KEY_FACTOR = 0x1_0000_0000

/** A band key as `document_bands` stores it. */
export const storedBandKey = (band: number, key: number): number => band * BAND_KEY_FACTOR + key

/**
 * Tunes the connection for a large ingest: a page cache of at least `kib` KiB (SQLite's default is
 * 2 MiB; the randomly keyed text-hash and band indexes otherwise miss it on every row once they
 * outgrow it), and WAL checkpoints every `kib` of log instead of every 1000 pages.
 */
export function tuneForBulkWrites(db: Db, kib: number): void {
  const current = db.pragma('cache_size', { simple: true }) as number
  // negative = KiB, positive = pages (of page_size bytes)
  const pageSize = db.pragma('page_size', { simple: true }) as number
  const currentKib = current < 0 ? -current : (current * pageSize) / 1024
  if (currentKib < kib) db.pragma(`cache_size = -${Math.floor(kib)}`)
  // checkpoint (which syncs) every `kib` of WAL instead of every 1000 pages: far fewer syncs during
  // a large ingest; SQLite still checkpoints, just less often
  const pages = Math.floor((kib * 1024) / pageSize)
  if ((db.pragma('wal_autocheckpoint', { simple: true }) as number) < pages) db.pragma(`wal_autocheckpoint = ${pages}`)
}

export interface DocumentRow {
  source_id: string
  external_id: string
  kind: 'posting' | 'request'
  title: string
  body: string
  posted_at: string
  month: string
  date_estimated: number
  text_hash: string
  duplicate_of: number | null
  dup_similarity: number | null
  occupation: string | null
  organisation: string | null
  location: string | null
  channel: string | null
  team: string | null
  skills_json: string | null
  signature: Buffer | null
}

export interface StoredSignature {
  id: number
  duplicate_of: number | null
  signature: Buffer | null
}

const DOCUMENT_COLUMNS = [
  'source_id', 'external_id', 'kind', 'title', 'body', 'posted_at', 'month', 'date_estimated', 'text_hash', 'duplicate_of',
  'dup_similarity', 'occupation', 'organisation', 'location', 'channel', 'team', 'skills_json', 'signature',
] as const satisfies readonly (keyof DocumentRow)[]

// positional parameters: binding by name costs a lookup per parameter per row
const INSERT_DOCUMENT = `INSERT INTO documents (${DOCUMENT_COLUMNS.join(', ')}) VALUES (${DOCUMENT_COLUMNS.map(() => '?').join(', ')})
  ON CONFLICT (source_id, external_id) DO NOTHING`

/**
 * Prepared statements for the ingest hot path, prepared once per connection and band count.
 * Every method runs inside the caller's batch transaction.
 */
export class DocumentStore {
  private readonly byHash: Statement
  private readonly byExternal: Statement
  private readonly insert: Statement
  private readonly signatureOf: Statement
  private readonly textOf: Statement
  private readonly insertBandsStmt: Statement
  private readonly pointStmt: Statement
  private readonly enqueue: Statement

  constructor(
    readonly db: Db,
    readonly bands: number,
  ) {
    this.byHash = db.prepare("SELECT id, duplicate_of FROM documents WHERE text_hash = ? AND kind = 'posting' ORDER BY id LIMIT 1")
    this.byExternal = db.prepare('SELECT id FROM documents WHERE source_id = ? AND external_id = ?').pluck()
    this.insert = db.prepare(INSERT_DOCUMENT)
    this.enqueue = db.prepare('INSERT OR IGNORE INTO unmapped_documents (id) VALUES (?)')
    this.signatureOf = db.prepare('SELECT id, duplicate_of, signature FROM documents WHERE id = ?')
    this.textOf = db.prepare('SELECT title, body FROM documents WHERE id = ?')
    const marks = Array.from({ length: bands }, () => '(?, ?)').join(', ')
    this.insertBandsStmt = db.prepare(`INSERT OR IGNORE INTO document_bands(key, document_id) VALUES ${marks}`)
    // both levels of band rows (see bands.ts); the recent one is small and its pages stay cached
    this.pointStmt = db.prepare('SELECT document_id FROM document_bands WHERE key = ? UNION ALL SELECT document_id FROM document_bands_recent WHERE key = ?').pluck()
  }

  /** The earliest stored posting with this normalised-text hash. */
  sameText(hash: string): { id: number; duplicate_of: number | null } | undefined {
    return this.byHash.get(hash) as { id: number; duplicate_of: number | null } | undefined
  }

  /** The id of the document with this external id in this source, if stored. */
  existing(sourceId: string, externalId: string): number | undefined {
    return this.byExternal.get(sourceId, externalId) as number | undefined
  }

  /**
   * Inserts a document unless its source already has one with the same external id (callers check
   * with existing() first; the conflict clause keeps a race harmless). A new original joins the
   * map's queue (migration 9).
   * @returns the new id, or null when it was already stored
   */
  insertDocument(row: DocumentRow): number | null {
    const info = this.insert.run(
      row.source_id, row.external_id, row.kind, row.title, row.body, row.posted_at, row.month, row.date_estimated, row.text_hash, row.duplicate_of,
      row.dup_similarity, row.occupation, row.organisation, row.location, row.channel, row.team, row.skills_json, row.signature,
    )
    if (info.changes === 0) return null
    const id = Number(info.lastInsertRowid)
    if (row.duplicate_of === null) this.enqueue.run(id)
    return id
  }

  /** Band keys as stored (storedBandKey). */
  static storedKeys(keys: readonly number[]): number[] {
    return keys.map((k, band) => storedBandKey(band, k))
  }

  insertBands(documentId: number, keys: readonly number[]): void {
    const args: number[] = []
    for (const k of DocumentStore.storedKeys(keys)) args.push(k, documentId)
    this.insertBandsStmt.run(...args)
  }

  /**
   * Ids of documents with this stored band key (storedBandKey), from both levels of band rows (an id
   * may come twice). One indexed lookup per band and level: measured six times
   * cheaper inside a large write transaction than one `key IN (...)` query, whose list SQLite builds
   * into a temporary b-tree on every call.
   */
  bandDocuments(stored: number): number[] {
    return this.pointStmt.all(stored, stored) as number[]
  }

  signature(id: number): StoredSignature | undefined {
    return this.signatureOf.get(id) as StoredSignature | undefined
  }

  text(id: number): { title: string; body: string } | undefined {
    return this.textOf.get(id) as { title: string; body: string } | undefined
  }
}

export function bandKeyCount(db: Db): number {
  return db.prepare('SELECT (SELECT COUNT(*) FROM document_bands) + (SELECT COUNT(*) FROM document_bands_recent)').pluck().get() as number
}

/** Every stored band key of both levels (for the in-memory filter), in key order within each. */
export function iterateBandKeys(db: Db): IterableIterator<number> {
  return db.prepare('SELECT key FROM document_bands UNION ALL SELECT key FROM document_bands_recent').pluck().iterate() as IterableIterator<number>
}

export function postingCount(db: Db): number {
  return db.prepare("SELECT COUNT(*) FROM documents WHERE kind = 'posting'").pluck().get() as number
}

/** Every posting's normalised-text hash (for the in-memory filter). */
export function iteratePostingHashes(db: Db): IterableIterator<string> {
  return db.prepare("SELECT text_hash FROM documents WHERE kind = 'posting'").pluck().iterate() as IterableIterator<string>
}

/** The highest document id (0 when there is none): an O(1) size estimate. */
export function maxDocumentId(db: Db): number {
  return db.prepare('SELECT COALESCE(MAX(id), 0) FROM documents').pluck().get() as number
}

/** Postings that carry band keys (all but exact-text duplicates), for rebuilding signatures and bands. */
export function* postingsForReindex(db: Db): Generator<{ id: number; title: string; body: string }> {
  yield* db.prepare("SELECT id, title, body FROM documents WHERE kind = 'posting' AND (duplicate_of IS NULL OR dup_similarity < 1) ORDER BY id").iterate() as Iterable<{
    id: number
    title: string
    body: string
  }>
}

export function clearBands(db: Db): void {
  db.prepare('DELETE FROM document_bands').run()
  db.prepare('DELETE FROM document_bands_recent').run()
}

export function setSignature(db: Db, id: number, signature: Buffer | null): void {
  db.prepare('UPDATE documents SET signature = ? WHERE id = ?').run(signature, id)
}

interface CountState {
  id: number
  kind: string
  month: string
  duplicate_of: number | null
  /** 1 when the document is mapped (not waiting in the map's queue), else 0 */
  mapped: number
}

/** Takes a document out of the demand aggregates when it counts there (a mapped original): its direct mentions rolled up. */
function uncountDocument(db: Db, delta: DemandDelta, doc: CountState): void {
  if (doc.duplicate_of !== null || !doc.mapped) return
  delta.document(doc.kind, doc.month, countedConcepts(db, doc.id), -1)
}

function countState(db: Db, id: number): CountState | undefined {
  return db
    .prepare(`SELECT id, kind, month, duplicate_of, ${isMapped('documents')} AS mapped FROM documents WHERE id = ?`)
    .get(id) as CountState | undefined
}

/**
 * Marks a stored document as a repost of `originalId` (for a dedupe decision made after it was
 * stored): it leaves the demand aggregates if it counted there, loses its mentions (reposts are
 * never mapped), and its own reposts move to the root original so that every chain keeps one root.
 * Call inside a transaction.
 * @throws Error when either document is missing or the link would make a cycle
 */
export function markDuplicate(db: Db, id: number, originalId: number, similarity: number): void {
  const doc = countState(db, id)
  const original = countState(db, originalId)
  if (!doc) throw new Error(`markDuplicate: document ${id} is not stored`)
  if (!original) throw new Error(`markDuplicate: original ${originalId} is not stored`)
  const root = original.duplicate_of ?? original.id
  if (root === id) throw new Error(`markDuplicate: document ${id} is the root of ${originalId}; a repost cannot be its own original`)
  const delta = new DemandDelta()
  uncountDocument(db, delta, doc)
  db.prepare('DELETE FROM mentions WHERE document_id = ?').run(id)
  deleteMentionList(db, doc.kind, doc.month, id)
  // a trigger takes it off the map's queue (migration 9)
  db.prepare('UPDATE documents SET duplicate_of = ?, dup_similarity = ? WHERE id = ?').run(root, similarity, id)
  db.prepare('UPDATE documents SET duplicate_of = ? WHERE duplicate_of = ?').run(root, id)
  delta.apply(db)
}

/**
 * Deletes documents (their mentions go with them), keeping the demand aggregates in step. A deleted
 * original's reposts are kept: the earliest becomes the new original (unmapped, so the next map run
 * maps and counts it) and the others point at it. Band keys of deleted documents stay behind; they
 * only yield candidates that are not found. Call inside a transaction.
 * @returns the number of documents deleted
 */
export function deleteDocuments(db: Db, ids: readonly number[]): number {
  const delta = new DemandDelta()
  const reposts = db.prepare('SELECT id FROM documents WHERE duplicate_of = ? ORDER BY id').pluck()
  let deleted = 0
  for (const id of ids) {
    const doc = countState(db, id)
    if (!doc) continue
    uncountDocument(db, delta, doc)
    const children = reposts.all(id) as number[]
    if (children.length > 0) {
      const [heir, ...rest] = children as [number, ...number[]]
      // a trigger puts it on the map's queue (migration 9)
      db.prepare('UPDATE documents SET duplicate_of = NULL, dup_similarity = NULL WHERE id = ?').run(heir)
      db.prepare('DELETE FROM mentions WHERE document_id = ?').run(heir)
      const heirState = countState(db, heir)!
      deleteMentionList(db, heirState.kind, heirState.month, heir)
      const move = db.prepare('UPDATE documents SET duplicate_of = ? WHERE id = ?')
      for (const other of rest) move.run(heir, other)
    }
    deleted += db.prepare('DELETE FROM documents WHERE id = ?').run(id).changes
  }
  delta.apply(db)
  return deleted
}

export interface DocumentCounts {
  documents: number
  originals: number
  duplicates: number
  postings: number
  requests: number
  dateEstimated: number
}

export function documentCounts(db: Db, sourceId?: string): DocumentCounts {
  const where = sourceId === undefined ? '' : 'WHERE source_id = ?'
  const row = db
    .prepare(
      `SELECT COUNT(*) AS documents, COALESCE(SUM(duplicate_of IS NULL), 0) AS originals, COALESCE(SUM(duplicate_of IS NOT NULL), 0) AS duplicates,
       COALESCE(SUM(kind = 'posting'), 0) AS postings, COALESCE(SUM(kind = 'request'), 0) AS requests, COALESCE(SUM(date_estimated), 0) AS dateEstimated
       FROM documents ${where}`,
    )
    .get(...(sourceId === undefined ? [] : [sourceId])) as DocumentCounts
  return row
}

// ------------------------------------------------------------------------------------------------
// webhook deliveries

export interface DeliveryRow {
  event_id: number
  endpoint: string
  status: 'pending' | 'delivered' | 'failed'
  attempts: number
  next_attempt_at: string | null
  last_error: string | null
  delivered_at: string | null
  type: string
  payload_json: string
  created_at: string
}

/** Queues events for an endpoint (idempotent: an event already queued for it is left as it is). */
export function queueDeliveries(db: Db, endpoint: string, eventIds: readonly number[], nowIso: string): number {
  const st = db.prepare("INSERT OR IGNORE INTO webhook_deliveries(event_id, endpoint, status, attempts, next_attempt_at) VALUES (?, ?, 'pending', 0, ?)")
  let n = 0
  for (const id of eventIds) n += st.run(id, endpoint, nowIso).changes
  return n
}

/** Pending deliveries whose next attempt is due, oldest event first, with their events. */
export function dueDeliveries(db: Db, nowIso: string, limit = 500): DeliveryRow[] {
  return db
    .prepare(
      `SELECT d.*, e.type, e.payload_json, e.created_at FROM webhook_deliveries d JOIN events e ON e.id = d.event_id
       WHERE d.status = 'pending' AND (d.next_attempt_at IS NULL OR d.next_attempt_at <= ?) ORDER BY d.event_id, d.endpoint LIMIT ?`,
    )
    .all(nowIso, limit) as DeliveryRow[]
}

/**
 * Claims a due delivery for one attempt by moving its next attempt to `leaseUntilIso`, so that two
 * processes delivering at once do not both send it. @returns false when another pass has it
 */
export function claimDelivery(db: Db, eventId: number, endpoint: string, nowIso: string, leaseUntilIso: string): boolean {
  return (
    db
      .prepare("UPDATE webhook_deliveries SET next_attempt_at = ? WHERE event_id = ? AND endpoint = ? AND status = 'pending' AND (next_attempt_at IS NULL OR next_attempt_at <= ?)")
      .run(leaseUntilIso, eventId, endpoint, nowIso).changes === 1
  )
}

export function markDelivered(db: Db, eventId: number, endpoint: string, nowIso: string): void {
  db.prepare("UPDATE webhook_deliveries SET status = 'delivered', attempts = attempts + 1, delivered_at = ?, last_error = NULL, next_attempt_at = NULL WHERE event_id = ? AND endpoint = ?").run(
    nowIso, eventId, endpoint,
  )
}

/** Records a failed attempt: retried at `nextIso`, or given up ('failed') when `nextIso` is null. */
export function markAttemptFailed(db: Db, eventId: number, endpoint: string, error: string, nextIso: string | null): void {
  db.prepare('UPDATE webhook_deliveries SET attempts = attempts + 1, last_error = ?, next_attempt_at = ?, status = ? WHERE event_id = ? AND endpoint = ?').run(
    error.slice(0, 500), nextIso, nextIso === null ? 'failed' : 'pending', eventId, endpoint,
  )
}

export function listDeliveries(db: Db, limit = 100): Omit<DeliveryRow, 'payload_json' | 'created_at'>[] {
  return db
    .prepare('SELECT d.*, e.type FROM webhook_deliveries d JOIN events e ON e.id = d.event_id ORDER BY d.event_id DESC, d.endpoint LIMIT ?')
    .all(limit) as Omit<DeliveryRow, 'payload_json' | 'created_at'>[]
}
