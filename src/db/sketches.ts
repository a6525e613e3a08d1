/**
 * @module db/sketches
 * The 8-bit sketches of stored postings' MinHash signatures (`document_sketches`, migration 6):
 * byte i is the low byte of signature value i (b-bit minwise hashing, Li and König 2010; see
 * SKETCH_BYTES in src/ingest/dedupe.ts for why a sketch can dismiss a candidate exactly as its full
 * signature would). A sketch is about 70 bytes on disk against the 2 KB or more of the posting's
 * row, so dismissing an older candidate by its sketch reads a page of a small table (about 70 MB at
 * a million postings) instead of a random page of the documents table (about 2.8 GB).
 *
 * The table holds a sketch for every document with a signature, written with the document (in the
 * same transaction). Triggers delete a document's sketch when the document is deleted or its
 * signature changes, so a sketch that exists always matches its document's current signature (ids
 * of deleted documents can be reused); a missing one only costs a read of the signature.
 */
import type { Statement } from 'better-sqlite3'
import type { Db } from './connection.ts'

/** Name of the SQL function that computes a sketch from stored signature bytes (for migration 6). */
export const SKETCH_FUNCTION = 'tides_sketch'

/**
 * The sketch of a signature stored as uint32 little-endian bytes: every fourth byte, from the first.
 * @example
 * sketchOfStored(Buffer.from([1, 2, 3, 4, 0xff, 0, 0, 0])) // => <Buffer 01 ff>
 */
export function sketchOfStored(signature: Uint8Array): Buffer {
  const out = Buffer.alloc(signature.length >>> 2)
  for (let i = 0; i < out.length; i++) out[i] = signature[i * 4]!
  return out
}

/** Registers SKETCH_FUNCTION on a connection (openDb does, before migrating). */
export function registerSketchFunction(db: Db): void {
  db.function(SKETCH_FUNCTION, { deterministic: true }, (sig: unknown) => (sig instanceof Uint8Array ? sketchOfStored(sig) : null))
}

/** Prepared statements for reading and writing sketches; call inside the caller's transaction. */
export class SketchStore {
  private readonly put: Statement
  private readonly get: Statement

  constructor(readonly db: Db) {
    this.put = db.prepare('INSERT OR REPLACE INTO document_sketches(id, sketch) VALUES (?, ?)')
    this.get = db.prepare('SELECT sketch FROM document_sketches WHERE id = ?').pluck()
  }

  /** reused for every insert: SQLite copies a bound blob, and a new Buffer per posting cost 4 µs */
  private buf = Buffer.alloc(0)

  /** Stores the sketch of document `id`'s signature. */
  insert(id: number, signature: Uint32Array): void {
    if (this.buf.length !== signature.length) this.buf = Buffer.alloc(signature.length)
    const buf = this.buf
    for (let i = 0; i < signature.length; i++) buf[i] = signature[i]! & 0xff
    this.put.run(id, buf)
  }

  /** The stored sketch of document `id`, if there is one. */
  sketch(id: number): Buffer | undefined {
    return this.get.get(id) as Buffer | undefined
  }
}
