/**
 * @module taxonomy/store
 * The taxonomy kept in the database: loading the configured (or shipped) taxonomy on first use,
 * importing a replacement (`tides import taxonomy FILE`), and the matcher built from what is
 * stored, once per taxonomy version.
 */
import fs from 'node:fs'
import path from 'node:path'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { bumpTaxonomyVersion, conceptCount, readConcepts, readMatcherCache, replaceTaxonomy, storedRules, taxonomyVersion, writeMatcherCache, type StoredRules } from '../db/taxonomy.ts'
import { emit } from '../events/outbox.ts'
import type { InputProblem } from '../util/csv.ts'
import { formatOf, loadTaxonomyText, rulesFileFor, SHIPPED_RULES, SHIPPED_TAXONOMY } from './index.ts'
import { compileMatcher } from './matcher-build.ts'
import { Matcher } from './matcher.ts'
import { matcherCodeKey, packMatcher, unpackMatcher } from './matcher-cache.ts'
import { emptyRules, parseRules } from './rules.ts'
import type { Concept, ConceptRecord, Problem, Taxonomy } from './types.ts'
import { buildTaxonomy } from './validate.ts'
import { readFailure } from '../errors.ts'

/** Problems in the input format the import command prints. */
export function toInputProblem(p: Problem): InputProblem {
  return { file: p.file, line: p.line, ...(p.field ? { column: p.field } : {}), reason: `${p.severity}: ${p.message}` }
}

/** Flags for the labels table: a label is case-sensitive when its rules require the case as written. */
function caseFlags(taxonomy: Taxonomy, rules: StoredRules | null) {
  const data = compileMatcher(taxonomy, rules ? parseRules(rules.text, rules.file) : emptyRules())
  const exact = new Set<string>()
  data.labelPolicy.forEach((p, i) => {
    if (p && p.caseMode !== 0) {
      const c = data.concepts[data.labelConcept[i]!]!
      for (const variant of data.labelWritten[i]!) exact.add(`${c.id}\u0000${variant.join(' ')}`)
    }
  })
  return { caseSensitive: (conceptId: string, label: string) => exact.has(`${conceptId}\u0000${label.split(/\s+/).join(' ')}`) }
}

function readRules(file: string | undefined): StoredRules | null {
  if (!file || !fs.existsSync(file)) return null
  return { text: fs.readFileSync(file, 'utf8'), file: path.basename(file) === 'rules.txt' && path.resolve(file) === SHIPPED_RULES ? 'taxonomy/rules.txt' : file }
}

export interface StoreOutcome {
  concepts: number
  /** documents marked for re-mapping */
  affected: number
  problems: Problem[]
}

/**
 * Loads the configured taxonomy (or the shipped one) when the database has none yet.
 * @returns undefined when a taxonomy was already stored
 * @throws Error when the configured file is missing or has errors
 */
export async function ensureTaxonomy(db: Db, config: Config, log: (m: string) => void = () => {}): Promise<StoreOutcome | undefined> {
  if (conceptCount(db) > 0) return undefined
  const file = config.taxonomy.file ?? SHIPPED_TAXONOMY
  const rulesFile = config.taxonomy.rulesFile ?? rulesFileFor(file)
  const format = formatOf(file)
  if (!format) throw new Error(`taxonomy.file ${file}: unknown format (expected .csv or .ttl)`)
  const loaded = await loadTaxonomyText(fs.readFileSync(file, 'utf8'), file, format)
  const errors = loaded.problems.filter((p) => p.severity === 'error')
  if (errors.length > 0) throw new Error(`taxonomy ${file} has ${errors.length} errors; first: ${errors[0]!.file}:${errors[0]!.line}: ${errors[0]!.message}`)
  const rules = readRules(rulesFile)
  const source = file === SHIPPED_TAXONOMY ? 'taxonomy/skills.csv (shipped)' : file
  const affected = db.transaction(() => {
    const n = replaceTaxonomy(db, loaded.taxonomy.concepts, rules, source, file === SHIPPED_TAXONOMY ? 'shipped' : 'import', caseFlags(loaded.taxonomy, rules))
    bumpTaxonomyVersion(db)
    return n
  })()
  log(`taxonomy: loaded ${loaded.taxonomy.concepts.length} concepts from ${source}`)
  return { concepts: loaded.taxonomy.concepts.length, affected, problems: loaded.problems }
}

export interface TaxonomyImportResult {
  kind: 'taxonomy'
  file: string
  read: number
  imported: number
  skipped: number
  problems: InputProblem[]
  refused: boolean
  /** refused as a whole: no concept could be read from it, so skipping bad rows cannot help */
  whole?: boolean
  /** documents marked for re-mapping */
  affected: number
}

/**
 * `tides import taxonomy FILE`: validates a CSV or SKOS Turtle taxonomy (with `NAME.rules` beside
 * it, if any) and replaces the stored one; every document is re-mapped by the next map run.
 * A file with errors is refused unless `skipBad`, which keeps the good part.
 */
export async function importTaxonomy(db: Db, file: string, opts: { skipBad: boolean; log?: (m: string) => void }): Promise<TaxonomyImportResult> {
  const format = formatOf(file)
  const base = { kind: 'taxonomy' as const, file, read: 0, imported: 0, skipped: 0, affected: 0 }
  if (!format) return { ...base, refused: true, whole: true, problems: [{ file, line: 0, reason: 'unknown taxonomy format (expected .csv or .ttl)' }] }
  let text: string
  try {
    text = fs.readFileSync(file, 'utf8')
  } catch (err) {
    return { ...base, refused: true, whole: true, problems: [{ file, line: 0, reason: `cannot read: ${readFailure(err)}` }] }
  }
  const loaded = await loadTaxonomyText(text, file, format)
  const rulesFile = rulesFileFor(file)
  const rules = readRules(rulesFile)
  const ruleProblems = rules ? parseRules(rules.text, rules.file).problems : []
  const problems = [...loaded.problems, ...ruleProblems]
  const errors = problems.filter((p) => p.severity === 'error')
  const concepts = loaded.taxonomy.concepts
  const read = concepts.length + errors.filter((p) => /row skipped|record dropped|skipped$/.test(p.message)).length
  if ((errors.length > 0 && !opts.skipBad) || concepts.length === 0) {
    // a refusal always says why, also for an empty file or one with only a header
    const why = concepts.length === 0 && errors.length === 0 ? [{ file, line: 1, reason: 'no concepts in the file (empty, or a header without rows)' }] : []
    return { ...base, read, refused: true, ...(concepts.length === 0 ? { whole: true } : {}), problems: [...problems.map(toInputProblem), ...why] }
  }
  const affected = db.transaction(() => {
    const n = replaceTaxonomy(db, concepts, rules, file, 'import', caseFlags(loaded.taxonomy, rules))
    const version = bumpTaxonomyVersion(db)
    emit(db, 'taxonomy.changed', { reason: 'import', file, concepts: concepts.length, version, affected: n })
    return n
  })()
  opts.log?.(`taxonomy: ${concepts.length} concepts from ${file}${rulesFile ? ` with rules ${rulesFile}` : ''}; ${affected} documents to re-map`)
  return { ...base, read, imported: concepts.length, skipped: read - concepts.length, refused: false, problems: problems.map(toInputProblem), affected }
}

/** The stored taxonomy, validated again (links and labels are checked on the way in, so this is quiet). */
export function storedTaxonomy(db: Db): Taxonomy {
  const records: ConceptRecord[] = readConcepts(db).map((c: Concept) => ({ ...c, source: { file: 'database', line: 0 } }))
  return buildTaxonomy(records).taxonomy
}

const matchers = new WeakMap<Db, { version: number; matcher: Matcher }>()

/**
 * The matcher for the stored taxonomy and rules: kept per connection until the taxonomy version
 * changes, and between runs in the database (taxonomy/matcher-cache.ts); compiled only when
 * neither holds it.
 */
export function matcherFromDb(db: Db): Matcher {
  return resolveMatcher(db, false).matcher
}

/**
 * The stored matcher and its bytes (for worker threads, which restore them with unpackMatcher; its
 * taxonomy is the one the bytes hold), compiling and storing it first when the database does not
 * hold it; bytes undefined when nothing can be cached.
 */
export function packedMatcherFromDb(db: Db): { matcher: Matcher; bytes: Uint8Array | undefined } {
  return resolveMatcher(db, true)
}

function resolveMatcher(db: Db, wantBytes: boolean): { matcher: Matcher; bytes: Uint8Array | undefined } {
  const version = taxonomyVersion(db)
  const code = matcherCodeKey()
  const cached = matchers.get(db)
  if (cached && cached.version === version) {
    if (!wantBytes || !code) return { matcher: cached.matcher, bytes: undefined }
    let bytes: Uint8Array | undefined = readMatcherCache(db, version, code)
    if (!bytes) storeMatcher(db, version, code, (bytes = packMatcher(cached.matcher)))
    return { matcher: cached.matcher, bytes }
  }
  let bytes: Uint8Array | undefined = code ? readMatcherCache(db, version, code) : undefined
  let matcher: Matcher | undefined
  if (bytes) {
    try {
      matcher = unpackMatcher(bytes)
    } catch {
      matcher = bytes = undefined // compiled afresh below and stored again
    }
  }
  if (!matcher) {
    matcher = compileStored(db)
    if (code) storeMatcher(db, version, code, (bytes = packMatcher(matcher)))
  }
  matchers.set(db, { version, matcher })
  return { matcher, bytes }
}

function compileStored(db: Db): Matcher {
  const rules = storedRules(db)
  return Matcher.build(storedTaxonomy(db), rules ? parseRules(rules.text, rules.file) : emptyRules())
}

/** Stores the bytes when the connection can write; a read-only or busy database just goes without. */
function storeMatcher(db: Db, version: number, code: string, bytes: Uint8Array): void {
  if (db.readonly) return
  try {
    writeMatcherCache(db, version, code, bytes)
  } catch {
    // the cache is an optimisation: the next run compiles again
  }
}
