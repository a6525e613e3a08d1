/**
 * @module db/ancestry
 * The roll-up of mentions: a document that mentions a concept counts for every concept broader than
 * it as well (`concept_broader`, SKOS skos:broader followed transitively, as skos:broaderTransitive).
 * Only direct mentions are stored (migration 14); the roll-up is derived where it is needed, from
 * the same links the matcher rolls up by (taxonomy/matcher-build.ts), so the demand aggregates count
 * a document for the same concepts whichever path counted it:
 * - in JavaScript, {@link Ancestry} (the map's counts, and {@link countedConcepts} for taking a
 *   stored document out of them again);
 * - in SQL, {@link CONCEPTS_UNDER} (a broader concept's documents) and {@link ROLL_UP} (every
 *   concept's documents), recursive common table expressions over the same table.
 *
 * The taxonomy's validator refuses cycles; both walks stop at one anyway (a set of visited concepts,
 * SQL's UNION), so a hand-made cycle cannot hang a reader.
 *
 * @example
 * ```ts
 * Ancestry.of(db).rollUp(['sql']) // => ['sql', 'databases', 'data-skills']
 * ```
 */
import type { Db } from './connection.ts'
import { getSetting } from './connection.ts'

/**
 * SQL: the common table `under(id)`: the concept bound to the first parameter and every concept
 * below it. Reading a broader concept's documents: `... WHERE m.concept_id IN (SELECT id FROM under)`.
 */
export const CONCEPTS_UNDER = `WITH RECURSIVE under(id) AS (
  SELECT ? UNION SELECT b.concept_id FROM concept_broader b JOIN under u ON b.broader_id = u.id)`

/**
 * SQL: the common table `roll_up(concept_id, counted_id)`: each concept with itself and each concept
 * above it. A document with a direct mention of `concept_id` counts for every `counted_id`.
 */
export const ROLL_UP = `WITH RECURSIVE roll_up(concept_id, counted_id) AS (
  SELECT id, id FROM concepts
  UNION SELECT r.concept_id, b.broader_id FROM roll_up r JOIN concept_broader b ON b.concept_id = r.counted_id)`

const cache = new WeakMap<Db, { key: string; ancestry: Ancestry }>()

/** Drops this connection's kept ancestry (a writer of `concept_broader` calls it; another connection's change moves the key). */
export function forgetAncestry(db: Db): void {
  cache.delete(db)
}

/** Each concept's broader concepts, transitively; read from `concept_broader`. */
export class Ancestry {
  private constructor(private readonly above: ReadonlyMap<string, readonly string[]>) {}

  /**
   * The ancestry of the stored taxonomy, kept per connection until this connection changes the
   * links ({@link forgetAncestry}) or the taxonomy version or the number of links is not the one it
   * was read at (another connection's change: every change of the links bumps the version,
   * taxonomy/store.ts, taxonomy/decisions.ts).
   */
  static of(db: Db): Ancestry {
    const links = db.prepare('SELECT COUNT(*) FROM concept_broader').pluck().get() as number
    // taxonomyVersion's setting (db/taxonomy.ts, which imports this module: read here, not imported)
    const key = `${getSetting(db, 'taxonomy.version') ?? 0}:${links}`
    const kept = cache.get(db)
    if (kept?.key === key) return kept.ancestry
    const ancestry = Ancestry.fromLinks(db.prepare('SELECT concept_id, broader_id FROM concept_broader').raw().all() as [string, string][])
    cache.set(db, { key, ancestry })
    return ancestry
  }

  /** From (concept, broader concept) links. */
  static fromLinks(links: Iterable<readonly [string, string]>): Ancestry {
    const broader = new Map<string, string[]>()
    for (const [concept, parent] of links) {
      const list = broader.get(concept)
      if (list) list.push(parent)
      else broader.set(concept, [parent])
    }
    const above = new Map<string, readonly string[]>()
    const visit = (id: string, path: Set<string>): readonly string[] => {
      const known = above.get(id)
      if (known) return known
      const out = new Set<string>()
      path.add(id)
      for (const parent of broader.get(id) ?? []) {
        if (path.has(parent)) continue
        out.add(parent)
        for (const a of visit(parent, path)) out.add(a)
      }
      path.delete(id)
      out.delete(id)
      const list = [...out]
      above.set(id, list)
      return list
    }
    for (const id of broader.keys()) visit(id, new Set())
    return new Ancestry(above)
  }

  /** The concepts broader than `id`, transitively (not `id` itself). */
  broaderOf(id: string): readonly string[] {
    return this.above.get(id) ?? []
  }

  /** The concepts a document with these direct mentions counts for: them and every broader one, each once. */
  rollUp(direct: Iterable<string>): string[] {
    const out = new Set<string>(direct)
    for (const id of [...out]) for (const a of this.broaderOf(id)) out.add(a)
    return [...out]
  }
}

/** The concepts a stored document counts for: its stored (direct) mentions, rolled up. */
export function countedConcepts(db: Db, documentId: number, ancestry: Ancestry = Ancestry.of(db)): string[] {
  const direct = db.prepare('SELECT concept_id FROM mentions WHERE document_id = ?').pluck().all(documentId) as string[]
  return ancestry.rollUp(direct)
}
