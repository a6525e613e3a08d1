/**
 * @module db/taxonomy
 * Every SQL statement of the taxonomy area: concepts, labels and broader links, the mapping of
 * documents to mentions, and candidate terms with their curator decisions. The taxonomy stage and
 * its decision functions call these; nothing else writes these tables.
 */
import type { Statement } from 'better-sqlite3'
import type { Db } from './connection.ts'
import { getSetting, setSetting } from './connection.ts'
import { Ancestry, countedConcepts, forgetAncestry, ROLL_UP } from './ancestry.ts'
import { clearDemandCounts, DemandDelta, isMapped } from './curves.ts'
import { clearMentionLists, mentionListWriter } from './mention-lists.ts'
import type { Concept, SkillType } from '../taxonomy/types.ts'
import type { MentionRow } from '../taxonomy/rows.ts'

const cache = new WeakMap<Db, Map<string, Statement>>()
function stmt(db: Db, sql: string): Statement {
  let m = cache.get(db)
  if (!m) {
    m = new Map()
    cache.set(db, m)
  }
  let s = m.get(sql)
  if (!s) {
    s = db.prepare(sql)
    m.set(sql, s)
  }
  return s
}

const VERSION_KEY = 'taxonomy.version'
const RULES_KEY = 'taxonomy.rules'
const SOURCE_KEY = 'taxonomy.source'

// ---------------------------------------------------------------- concepts and labels

export function conceptCount(db: Db): number {
  return (stmt(db, 'SELECT COUNT(*) AS n FROM concepts').get() as { n: number }).n
}

/** The taxonomy version documents are mapped against (0 before any taxonomy is stored). */
export function taxonomyVersion(db: Db): number {
  return Number(getSetting(db, VERSION_KEY) ?? 0)
}

/** Increments the taxonomy version; call inside the transaction that changes the taxonomy. */
export function bumpTaxonomyVersion(db: Db): number {
  const v = taxonomyVersion(db) + 1
  setSetting(db, VERSION_KEY, String(v))
  // the compiled matcher of the old version is no use any more (taxonomy/matcher-cache.ts)
  stmt(db, 'DELETE FROM matcher_cache').run()
  return v
}

/** The compiled matcher stored for a taxonomy version and build of the code, if any. */
export function readMatcherCache(db: Db, version: number, code: string): Buffer | undefined {
  const row = stmt(db, 'SELECT data FROM matcher_cache WHERE taxonomy_version = ? AND code = ?').get(version, code) as { data: Buffer } | undefined
  return row?.data
}

/** Stores the compiled matcher of a taxonomy version (replacing any other: one is kept). */
export function writeMatcherCache(db: Db, version: number, code: string, data: Uint8Array): void {
  db.transaction(() => {
    stmt(db, 'DELETE FROM matcher_cache').run()
    stmt(db, 'INSERT INTO matcher_cache (taxonomy_version, code, data) VALUES (?, ?, ?)').run(version, code, data)
  })()
}

export interface StoredRules {
  text: string
  file: string
}

/** The rule file stored with the taxonomy (its text and original name), if any. */
export function storedRules(db: Db): StoredRules | undefined {
  const raw = getSetting(db, RULES_KEY)
  return raw ? (JSON.parse(raw) as StoredRules) : undefined
}

/** Where the stored taxonomy came from (file name), for reports. */
export function taxonomySource(db: Db): string | undefined {
  return getSetting(db, SOURCE_KEY)
}

export interface LabelFlags {
  /** true when matching that label requires the case as written */
  caseSensitive(conceptId: string, label: string): boolean
}

/**
 * Replaces the whole taxonomy (concepts, labels, broader links, stored rules). Mentions of the old
 * taxonomy are deleted and every document is marked unmapped. Call inside a transaction.
 * @returns the number of documents that will be re-mapped
 */
export function replaceTaxonomy(db: Db, concepts: readonly Concept[], rules: StoredRules | null, source: string, origin: string, flags: LabelFlags): number {
  stmt(db, 'DELETE FROM mentions').run()
  clearMentionLists(db)
  // every original becomes unmapped below, so nothing counts in the demand aggregates any more
  clearDemandCounts(db)
  stmt(db, 'DELETE FROM concept_broader').run()
  forgetAncestry(db)
  stmt(db, 'DELETE FROM labels').run()
  stmt(db, 'DELETE FROM concepts').run()
  for (const c of concepts) insertConcept(db, c, origin, flags)
  for (const c of concepts) insertBroader(db, c.id, c.broader)
  if (rules) setSetting(db, RULES_KEY, JSON.stringify(rules))
  else stmt(db, 'DELETE FROM settings WHERE key = ?').run(RULES_KEY)
  setSetting(db, SOURCE_KEY, source)
  stmt(db, 'INSERT OR IGNORE INTO unmapped_documents (id) SELECT id FROM documents WHERE duplicate_of IS NULL').run()
  return countUnmapped(db)
}

/** Inserts one concept with its labels (not its broader links). */
export function insertConcept(db: Db, c: Concept, origin: string, flags: LabelFlags): void {
  stmt(db, 'INSERT INTO concepts(id, pref_label, type, origin) VALUES (?, ?, ?, ?)').run(c.id, c.prefLabel, c.type, origin)
  insertLabel(db, c.id, c.prefLabel, 'pref', flags.caseSensitive(c.id, c.prefLabel))
  for (const l of c.altLabels) insertLabel(db, c.id, l, 'alt', flags.caseSensitive(c.id, l))
  for (const l of c.hiddenLabels) insertLabel(db, c.id, l, 'hidden', flags.caseSensitive(c.id, l))
}

/**
 * Stores a concept's broader links (the taxonomy's validator, or the caller, has checked that they
 * name stored concepts and make no cycle). Documents already counted for the concept's roll-up are
 * not counted again: call it for a new concept, or re-map the documents of the concepts below.
 */
export function insertBroader(db: Db, conceptId: string, broader: readonly string[]): void {
  for (const b of broader) stmt(db, 'INSERT OR IGNORE INTO concept_broader(concept_id, broader_id) VALUES (?, ?)').run(conceptId, b)
  if (broader.length) forgetAncestry(db)
}

export function insertLabel(db: Db, conceptId: string, label: string, kind: 'pref' | 'alt' | 'hidden', caseSensitive: boolean): void {
  stmt(db, 'INSERT OR IGNORE INTO labels(concept_id, label, kind, case_sensitive) VALUES (?, ?, ?, ?)').run(conceptId, label, kind, caseSensitive ? 1 : 0)
}

/** Reads the stored taxonomy back as concepts (in id order, labels in insertion order). */
export function readConcepts(db: Db): Concept[] {
  const rows = stmt(db, 'SELECT id, pref_label, type FROM concepts ORDER BY rowid').all() as { id: string; pref_label: string; type: SkillType }[]
  const byId = new Map<string, Concept>()
  const concepts = rows.map((r) => {
    const c: Concept = { id: r.id, prefLabel: r.pref_label, altLabels: [], hiddenLabels: [], broader: [], type: r.type }
    byId.set(r.id, c)
    return c
  })
  for (const l of stmt(db, "SELECT concept_id, label, kind FROM labels WHERE kind != 'pref' ORDER BY rowid").all() as { concept_id: string; label: string; kind: string }[]) {
    const c = byId.get(l.concept_id)
    if (!c) continue
    if (l.kind === 'alt') c.altLabels.push(l.label)
    else c.hiddenLabels.push(l.label)
  }
  for (const b of stmt(db, 'SELECT concept_id, broader_id FROM concept_broader ORDER BY rowid').all() as { concept_id: string; broader_id: string }[]) {
    byId.get(b.concept_id)?.broader.push(b.broader_id)
  }
  return concepts
}

export function conceptExists(db: Db, id: string): boolean {
  return stmt(db, 'SELECT 1 FROM concepts WHERE id = ?').get(id) !== undefined
}

// ---------------------------------------------------------------- mapping documents

export interface DocumentToMap {
  id: number
  kind: 'posting' | 'request'
  title: string
  body: string
  skills_json: string | null
}

/**
 * The unmapped original documents: the map's queue (migration 9: the ingest queues new originals,
 * triggers follow the rare changes), with their rows of documents where the texts are read.
 */
const QUEUED_DOCUMENTS = 'FROM unmapped_documents u JOIN documents d ON d.id = u.id'

/** Unmapped original documents: the length of the map's queue. */
export function countUnmapped(db: Db): number {
  return stmt(db, 'SELECT COUNT(*) FROM unmapped_documents').pluck().get() as number
}

/** SQL counting the mapped original documents of any kind (those not queued), as `n`. */
export const COUNT_MAPPED = `SELECT COUNT(*) AS n FROM documents d WHERE d.duplicate_of IS NULL AND ${isMapped('d')}`

/** Mapped original documents of any kind (those not queued). */
export function countMapped(db: Db): number {
  return stmt(db, COUNT_MAPPED).pluck().get() as number
}

/** Mapped original postings and requests: the sum of the running totals (no scan of documents). */
export function countMappedCounted(db: Db): number {
  return stmt(db, 'SELECT COALESCE(SUM(total), 0) FROM demand_totals').pluck().get() as number
}

const MENTION_CONCEPT_INDEX = 'CREATE INDEX IF NOT EXISTS mentions_concept ON mentions(concept_id)'

/**
 * Drops the mentions-by-concept index for a bulk map. Every mention row inserted while it exists
 * lands at a random place in it (about a third of map's time on the N = 100,000 benchmark, more as
 * the index outgrows the page cache); one CREATE INDEX afterwards sorts instead.
 * {@link ensureMentionConceptIndex} puts it back (the map stage also does so at its next start after
 * a kill mid-way).
 */
export function dropMentionConceptIndex(db: Db): void {
  db.exec('DROP INDEX IF EXISTS mentions_concept')
}

/** Creates the mentions-by-concept index if it is missing. @returns true when it had to be built */
export function ensureMentionConceptIndex(db: Db): boolean {
  const exists = db.prepare("SELECT COUNT(*) FROM sqlite_master WHERE type = 'index' AND name = 'mentions_concept'").pluck().get() as number
  if (exists) return false
  db.exec(MENTION_CONCEPT_INDEX)
  return true
}

/** The next unmapped original documents after `afterId`, in id order. */
export function unmappedAfter(db: Db, afterId: number, limit: number): DocumentToMap[] {
  return stmt(db, `SELECT d.id, d.kind, d.title, d.body, d.skills_json ${QUEUED_DOCUMENTS} WHERE u.id > ? ORDER BY u.id LIMIT ?`).all(afterId, limit) as DocumentToMap[]
}

/**
 * The id that ends the next batch after `afterId`: the `size`-th unmapped original or the last one,
 * or undefined when none is left. Read from the queue alone, so that the map's main thread touches
 * no document row when worker threads read the texts (unmappedBetween).
 */
export function unmappedBatchEnd(db: Db, afterId: number, size: number): number | undefined {
  const end = stmt(db, 'SELECT id FROM unmapped_documents WHERE id > ? ORDER BY id LIMIT 1 OFFSET ?').pluck().get(afterId, size - 1) as number | undefined
  return end ?? ((stmt(db, 'SELECT MAX(id) FROM unmapped_documents WHERE id > ?').pluck().get(afterId) as number | null) ?? undefined)
}

/** The unmapped original documents with ids from `first` to `last`, in id order (a worker thread's read). */
export function unmappedBetween(db: Db, first: number, last: number): DocumentToMap[] {
  return stmt(db, `SELECT d.id, d.kind, d.title, d.body, d.skills_json ${QUEUED_DOCUMENTS} WHERE u.id >= ? AND u.id <= ? ORDER BY u.id`).all(first, last) as DocumentToMap[]
}

/** Original documents after `afterId`, mapped or not (for finding those a taxonomy change affects). */
export function documentsAfter(db: Db, afterId: number, limit: number): DocumentToMap[] {
  return stmt(db, 'SELECT id, kind, title, body, skills_json FROM documents WHERE duplicate_of IS NULL AND id > ? ORDER BY id LIMIT ?').all(afterId, limit) as DocumentToMap[]
}

export type { MentionRow } from '../taxonomy/rows.ts'

/** A document's mapping: its mention rows, at most one per concept. */
export interface DocumentMapping {
  id: number
  rows: readonly MentionRow[]
}

/**
 * Replaces the mentions of a batch of documents (and their rows of mention_lists), takes them off
 * the map's queue, and keeps the demand aggregates in step (a document that counted before, a mapped
 * original, has its old mentions taken out; an original counts with its new ones, and with every
 * concept broader than them (db/ancestry.ts). Documents go in id order, each one's mentions in
 * concept order (appends to the table's primary key). One prepared single-row INSERT: measured on
 * the N = 100,000 benchmark database, 100-row INSERT statements stored 289,617 mention rows about
 * 2.5 times slower than single-row ones. Call inside the batch's transaction.
 * @returns the number of roll-ups: broader concepts the documents count for without mentioning them
 */
export function saveMappings(db: Db, docs: readonly DocumentMapping[]): number {
  const delta = new DemandDelta()
  const ancestry = Ancestry.of(db)
  const state = stmt(db, 'SELECT kind, month, duplicate_of FROM documents WHERE id = ?')
  const clear = stmt(db, 'DELETE FROM mentions WHERE document_id = ?')
  const insert = stmt(db, 'INSERT INTO mentions(document_id, concept_id, count, first_offset, via) VALUES (?, ?, ?, ?, ?)')
  const dequeue = stmt(db, 'DELETE FROM unmapped_documents WHERE id = ?')
  const sorted = [...docs].sort((a, b) => a.id - b.id)
  const order = (a: MentionRow, b: MentionRow) => (a.conceptId < b.conceptId ? -1 : a.conceptId > b.conceptId ? 1 : 0)
  const direct = sorted.map((d) => [...d.rows].sort(order))
  let rollups = 0
  // the documents' direct concepts, for their rows of mention_lists (db/mention-lists.ts)
  const writeList = mentionListWriter(db, new Set(direct.flatMap((rows) => rows.map((r) => r.conceptId))))
  for (const [i, d] of sorted.entries()) {
    const doc = state.get(d.id) as { kind: string; month: string; duplicate_of: number | null } | undefined
    if (!doc) throw new Error(`saveMappings: document ${d.id} is not stored`)
    // an original that was not queued was mapped and counts: its old mentions come out first
    const wasQueued = dequeue.run(d.id).changes > 0
    if (doc.duplicate_of === null && !wasQueued) delta.document(doc.kind, doc.month, countedConcepts(db, d.id, ancestry), -1)
    clear.run(d.id)
    const rows = direct[i]!
    for (const r of rows) insert.run(d.id, r.conceptId, r.count, r.firstOffset, r.via)
    const concepts = rows.map((r) => r.conceptId)
    writeList(doc.kind, doc.month, d.id, concepts)
    const counted = ancestry.rollUp(concepts)
    rollups += counted.length - concepts.length
    if (doc.duplicate_of === null) delta.document(doc.kind, doc.month, counted, 1)
  }
  delta.apply(db)
  return rollups
}

/** Marks documents unmapped so that the map stage maps them again (they stop counting in demand until then). */
export function markUnmapped(db: Db, ids: readonly number[]): number {
  const delta = new DemandDelta()
  const ancestry = Ancestry.of(db)
  const state = stmt(db, 'SELECT kind, month, duplicate_of FROM documents WHERE id = ?')
  const queue = stmt(db, 'INSERT OR IGNORE INTO unmapped_documents (id) VALUES (?)')
  let n = 0
  for (const id of ids) {
    const doc = state.get(id) as { kind: string; month: string; duplicate_of: number | null } | undefined
    // reposts are never mapped; a mapped original stops counting until it is mapped again
    if (!doc || doc.duplicate_of !== null) continue
    if (queue.run(id).changes > 0) delta.document(doc.kind, doc.month, countedConcepts(db, id, ancestry), -1)
    n++
  }
  delta.apply(db)
  return n
}

export interface MentionSummary {
  concept_id: string
  pref_label: string
  documents: number
  direct: number
}

/** Per concept: documents mentioning it (directly or by roll-up), and how many of them directly. */
export function mentionSummary(db: Db, limit = 1000): MentionSummary[] {
  return stmt(
    db,
    `${ROLL_UP}
     SELECT r.counted_id AS concept_id, c.pref_label, COUNT(DISTINCT m.document_id) AS documents,
       COUNT(DISTINCT CASE WHEN m.concept_id = r.counted_id THEN m.document_id END) AS direct
     FROM mentions m JOIN roll_up r ON r.concept_id = m.concept_id JOIN concepts c ON c.id = r.counted_id
     GROUP BY r.counted_id ORDER BY documents DESC, r.counted_id LIMIT ?`,
  ).all(limit) as MentionSummary[]
}

// ---------------------------------------------------------------- candidate terms

export interface DocumentText {
  id: number
  month: string
  title: string
  body: string
}

/**
 * Original documents' month and text, in id order, for candidate-term discovery. With `sinceMonth`,
 * only documents of that month or later (found through the (kind, month) index, so the cost follows
 * the window, not the corpus).
 */
export function* iterateDocumentTexts(db: Db, sinceMonth?: string): Generator<DocumentText> {
  if (sinceMonth !== undefined) {
    const ids = new Float64Array(
      stmt(db, "SELECT id FROM documents WHERE kind IN ('posting','request') AND month >= ?").pluck().all(sinceMonth) as number[],
    ).sort()
    const fetch = stmt(db, 'SELECT id, month, title, body FROM documents WHERE id = ? AND duplicate_of IS NULL')
    for (const id of ids) {
      const row = fetch.get(id) as DocumentText | undefined
      if (row) yield row
    }
    return
  }
  let after = 0
  for (;;) {
    const rows = stmt(db, 'SELECT id, month, title, body FROM documents WHERE duplicate_of IS NULL AND id > ? ORDER BY id LIMIT 2000').all(after) as DocumentText[]
    if (rows.length === 0) return
    yield* rows
    after = rows[rows.length - 1]!.id
  }
}

/** The latest month of any original document (string order, as candidate discovery compares), or null. */
export function latestOriginalMonth(db: Db): string | null {
  let latest: string | null = null
  for (const kind of ['posting', 'request']) {
    // walks the (kind, month) index from the end until an original turns up
    const m = stmt(db, 'SELECT month FROM documents WHERE kind = ? AND duplicate_of IS NULL ORDER BY month DESC LIMIT 1').pluck().get(kind) as string | undefined
    if (m !== undefined && (latest === null || m > latest)) latest = m
  }
  return latest
}

export interface CandidateInput {
  term: string
  score: number
  recentDf: number
  earlierDf: number
  trend: unknown
  examples: unknown
}

/**
 * Stores the current open candidates: open rows no longer found are removed, decided rows
 * (accepted, dismissed) are never touched or reopened.
 */
export function replaceOpenCandidates(db: Db, rows: readonly CandidateInput[]): void {
  stmt(db, "DELETE FROM candidate_terms WHERE status = 'open'").run()
  const ins = stmt(
    db,
    `INSERT INTO candidate_terms(term, score, recent_df, earlier_df, trend_json, examples_json, status, updated_at)
     VALUES (?, ?, ?, ?, ?, ?, 'open', strftime('%Y-%m-%dT%H:%M:%fZ','now'))
     ON CONFLICT(term) DO NOTHING`,
  )
  for (const r of rows) ins.run(r.term, r.score, r.recentDf, r.earlierDf, JSON.stringify(r.trend), JSON.stringify(r.examples))
}

export interface CandidateTermRow {
  term: string
  score: number
  recent_df: number
  earlier_df: number
  trend_json: string
  examples_json: string
  status: 'open' | 'accepted' | 'dismissed'
  decision_json: string | null
  updated_at: string
}

export function listCandidates(db: Db, status: string | undefined, limit: number): CandidateTermRow[] {
  if (status) return stmt(db, 'SELECT * FROM candidate_terms WHERE status = ? ORDER BY score DESC, term LIMIT ?').all(status, limit) as CandidateTermRow[]
  return stmt(db, 'SELECT * FROM candidate_terms ORDER BY score DESC, term LIMIT ?').all(limit) as CandidateTermRow[]
}

export function getCandidate(db: Db, term: string): CandidateTermRow | undefined {
  return stmt(db, 'SELECT * FROM candidate_terms WHERE term = ?').get(term) as CandidateTermRow | undefined
}

const CANDIDATES_AT_KEY = 'candidates.computed_at'
const CANDIDATES_VERSION_KEY = 'candidates.taxonomy_version'

/** When the open candidate list was last computed, and against which taxonomy version (undefined: never). */
export function candidatesComputed(db: Db): { at: string; taxonomyVersion: number } | undefined {
  const at = getSetting(db, CANDIDATES_AT_KEY)
  if (at === undefined) return undefined
  return { at, taxonomyVersion: Number(getSetting(db, CANDIDATES_VERSION_KEY) ?? 0) }
}

/** Records that the open candidate list was computed at `at` against the current taxonomy version (inside the transaction that stores it). */
export function markCandidatesComputed(db: Db, at: string): void {
  setSetting(db, CANDIDATES_AT_KEY, at)
  setSetting(db, CANDIDATES_VERSION_KEY, String(taxonomyVersion(db)))
  settleCandidates(db)
}

const CANDIDATES_OWED_KEY = 'candidates.owed'

/**
 * Records, in the transaction that maps documents, that the map run owes a decision on the
 * candidate list (refresh it or keep it): a run killed after its last mapping commit and before
 * that decision leaves the flag, and the next map run makes the decision although it maps nothing.
 */
export function markCandidatesOwed(db: Db): void {
  setSetting(db, CANDIDATES_OWED_KEY, '1')
}

/** Whether a map run's decision on the candidate list is still owed (see {@link markCandidatesOwed}). */
export function candidatesOwed(db: Db): boolean {
  return getSetting(db, CANDIDATES_OWED_KEY) !== undefined
}

/** The decision on the candidate list has been made (refreshed, or kept as not due). */
export function settleCandidates(db: Db): void {
  stmt(db, 'DELETE FROM settings WHERE key = ?').run(CANDIDATES_OWED_KEY)
}

/** Terms the curator has dismissed (kept out of future candidate lists). */
export function dismissedTerms(db: Db): Set<string> {
  return new Set((stmt(db, "SELECT term FROM candidate_terms WHERE status = 'dismissed'").all() as { term: string }[]).map((r) => r.term))
}

/** Records a curator's decision on an open candidate; returns false when it was not open. */
export function decideCandidate(db: Db, term: string, status: 'accepted' | 'dismissed', decision: Record<string, unknown>): boolean {
  return (
    stmt(db, "UPDATE candidate_terms SET status = ?, decision_json = ?, updated_at = strftime('%Y-%m-%dT%H:%M:%fZ','now') WHERE term = ? AND status = 'open'").run(
      status,
      JSON.stringify(decision),
      term,
    ).changes === 1
  )
}
