/**
 * @module taxonomy/types
 * Shapes shared by the taxonomy loaders, the validator, the matcher and candidate-term discovery.
 */

/** `hard` for technical and domain skills, `soft` for interpersonal and cognitive ones. */
export type SkillType = 'hard' | 'soft'

/** Where a record came from, for messages that name file and line. */
export interface SourceRef {
  file: string
  line: number
}

/** One concept as read from a file, before validation. */
export interface ConceptRecord {
  id: string
  prefLabel: string
  altLabels: string[]
  hiddenLabels: string[]
  broader: string[]
  type: SkillType
  source: SourceRef
}

/** A validated concept. `broader` holds only ids that exist and close no cycle. */
export interface Concept {
  id: string
  prefLabel: string
  altLabels: string[]
  hiddenLabels: string[]
  broader: string[]
  type: SkillType
  source?: SourceRef
  /** set when the prefLabel duplicates another concept's label: shown, but never matched */
  unmatchedPrefLabel?: boolean
}

/** A problem found while reading or validating a taxonomy or rule file. */
export interface Problem {
  file: string
  line: number
  /** the column or predicate concerned, when there is one */
  field?: string
  message: string
  /** errors drop the row, link or label concerned; warnings keep it */
  severity: 'error' | 'warning'
}

/** A validated taxonomy: concepts in file order, with an index by id. */
export interface Taxonomy {
  concepts: Concept[]
  byId: Map<string, Concept>
}

/** What every loader returns: the good part of the input and every problem found. */
export interface LoadResult {
  taxonomy: Taxonomy
  problems: Problem[]
}

/** Formats a problem the way the CLI prints it: `file:line: field: message`. */
export function formatProblem(p: Problem): string {
  return `${p.file}:${p.line}: ${p.severity}: ${p.field ? `${p.field}: ` : ''}${p.message}`
}
