/**
 * @module taxonomy/decisions
 * A curator's decisions on candidate terms, called by the dashboard: accept a term as a new
 * concept, accept it as an altLabel of an existing concept, or dismiss it. Accepting changes the
 * taxonomy: in the same transaction the documents the new label touches are marked for
 * re-mapping, the taxonomy version moves on and `taxonomy.changed` says how many documents are
 * affected; the map stage (subscribed to that event) re-maps them.
 */
import type { Db } from '../db/connection.ts'
import {
  bumpTaxonomyVersion,
  conceptExists,
  decideCandidate,
  documentsAfter,
  getCandidate,
  insertBroader,
  insertConcept,
  insertLabel,
  markUnmapped,
} from '../db/taxonomy.ts'
import { emit } from '../events/outbox.ts'
import { Matcher } from './matcher.ts'
import { labelKey } from './tokenizer.ts'
import { slugify } from './slug.ts'
import { storedTaxonomy } from './store.ts'
import type { Concept, SkillType } from './types.ts'

/** A decision that cannot be carried out (unknown term, clash with an existing label ...). */
export class DecisionError extends Error {
  override name = 'DecisionError'
}

export interface DecisionOutcome {
  term: string
  conceptId?: string
  /** documents marked for re-mapping */
  affected: number
  version?: number
}

function openCandidate(db: Db, term: string): void {
  const c = getCandidate(db, term)
  if (!c) throw new DecisionError(`no candidate term "${term}"`)
  if (c.status !== 'open') throw new DecisionError(`candidate term "${term}" was already ${c.status}`)
}

/** The concept that already has this label (compared as the matcher compares labels), if any. */
function labelOwner(concepts: readonly Concept[], label: string): string | undefined {
  const key = labelKey(label)
  for (const c of concepts) {
    for (const l of [c.prefLabel, ...c.altLabels, ...c.hiddenLabels]) if (labelKey(l) === key) return c.id
  }
  return undefined
}

/**
 * Documents in which a label occurs (as the matcher's tokens see it, rules aside), by scanning
 * every original document with a one-concept matcher built for that label.
 */
export function documentsWithLabel(db: Db, label: string, type: SkillType): number[] {
  const probe: Concept = { id: 'probe', prefLabel: label, altLabels: [], hiddenLabels: [], broader: [], type }
  const m = Matcher.build({ concepts: [probe], byId: new Map([['probe', probe]]) })
  const out: number[] = []
  let after = 0
  for (;;) {
    const docs = documentsAfter(db, after, 2000)
    if (docs.length === 0) break
    for (const d of docs) {
      const text = `${d.title}\n${d.body}\n${d.skills_json ?? ''}`
      if (m.containsAnyLabel(text)) out.push(d.id)
    }
    after = docs[docs.length - 1]!.id
  }
  return out
}

function changeTaxonomy(db: Db, term: string, label: string, type: SkillType, payload: Record<string, unknown>, apply: () => void): DecisionOutcome {
  const affectedIds = documentsWithLabel(db, label, type)
  return db.transaction(() => {
    apply()
    const affected = markUnmapped(db, affectedIds)
    const version = bumpTaxonomyVersion(db)
    emit(db, 'taxonomy.changed', { ...payload, term, version, affected })
    return { term, affected, version, ...(typeof payload['conceptId'] === 'string' ? { conceptId: payload['conceptId'] } : {}) }
  })()
}

/**
 * Accepts a candidate as a new concept (id: the given one or the slug of its label).
 * @throws DecisionError when the term is not an open candidate, the id exists or the label is taken
 */
export function acceptAsConcept(db: Db, term: string, choice: { id?: string; label?: string; type?: SkillType; broader?: string[] }, actor: string): DecisionOutcome {
  openCandidate(db, term)
  const label = (choice.label ?? term).trim()
  const id = (choice.id ?? slugify(label)).trim()
  const type = choice.type ?? 'hard'
  if (!id || /[\s|]/.test(id)) throw new DecisionError(`concept id "${id}" is empty or contains whitespace or "|"`)
  if (conceptExists(db, id)) throw new DecisionError(`a concept with id "${id}" already exists`)
  const owner = labelOwner(storedTaxonomy(db).concepts, label)
  if (owner) throw new DecisionError(`"${label}" is already a label of concept "${owner}"`)
  for (const b of choice.broader ?? []) if (!conceptExists(db, b)) throw new DecisionError(`broader concept "${b}" does not exist`)
  const concept: Concept = { id, prefLabel: label, altLabels: label === term ? [] : [term], hiddenLabels: [], broader: choice.broader ?? [], type }
  return changeTaxonomy(db, term, label, type, { reason: 'candidate-accepted', conceptId: id, as: 'concept', actor }, () => {
    insertConcept(db, concept, 'candidate', { caseSensitive: () => false })
    insertBroader(db, id, concept.broader)
    decideCandidate(db, term, 'accepted', { as: 'concept', conceptId: id, label, type, actor, at: new Date().toISOString() })
  })
}

/**
 * Accepts a candidate as an altLabel of an existing concept.
 * @throws DecisionError when the term is not an open candidate, the concept is unknown or the label is taken
 */
export function acceptAsAltLabel(db: Db, term: string, conceptId: string, actor: string): DecisionOutcome {
  openCandidate(db, term)
  const taxonomy = storedTaxonomy(db)
  const concept = taxonomy.byId.get(conceptId)
  if (!concept) throw new DecisionError(`no concept with id "${conceptId}"`)
  const owner = labelOwner(taxonomy.concepts, term)
  if (owner) throw new DecisionError(`"${term}" is already a label of concept "${owner}"`)
  return changeTaxonomy(db, term, term, concept.type, { reason: 'candidate-accepted', conceptId, as: 'altLabel', actor }, () => {
    insertLabel(db, conceptId, term, 'alt', false)
    decideCandidate(db, term, 'accepted', { as: 'altLabel', conceptId, actor, at: new Date().toISOString() })
  })
}

/** Dismisses a candidate; it is not proposed again. The taxonomy does not change. */
export function dismissCandidate(db: Db, term: string, actor: string): DecisionOutcome {
  openCandidate(db, term)
  db.transaction(() => decideCandidate(db, term, 'dismissed', { actor, at: new Date().toISOString() }))()
  return { term, affected: 0 }
}
