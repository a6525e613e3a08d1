/**
 * @module taxonomy
 * Entry points: load a taxonomy (CSV or SKOS Turtle) with its rule file, validate it, and build
 * the matcher. The shipped taxonomy lives in taxonomy/skills.csv with its rules in
 * taxonomy/rules.txt.
 */
import fs from 'node:fs'
import path from 'node:path'
import { parseTaxonomyCsv } from './csv-loader.ts'
import { Matcher } from './matcher.ts'
import { emptyRules, parseRules, type RuleSet } from './rules.ts'
import { parseSkosTurtle } from './skos-loader.ts'
import type { LoadResult, Problem } from './types.ts'
import { buildTaxonomy } from './validate.ts'
import { PROJECT_ROOT } from '../util/build.ts'

/** The shipped taxonomy and its rule file. */
export const SHIPPED_TAXONOMY = path.join(PROJECT_ROOT, 'taxonomy', 'skills.csv')
export const SHIPPED_RULES = path.join(PROJECT_ROOT, 'taxonomy', 'rules.txt')

export type TaxonomyFormat = 'csv' | 'ttl'

/** Taxonomy format from a file name (.csv, or .ttl/.turtle). */
export function formatOf(file: string): TaxonomyFormat | undefined {
  const ext = path.extname(file).toLowerCase()
  if (ext === '.csv') return 'csv'
  if (ext === '.ttl' || ext === '.turtle') return 'ttl'
  return undefined
}

/**
 * Parses and validates taxonomy CSV text (synchronous).
 * @example
 * loadCsvTaxonomy('id,prefLabel,altLabel,hiddenLabel,broader,type\npython,Python,,,,hard\n', 'x.csv').taxonomy.concepts.length // => 1
 */
export function loadCsvTaxonomy(text: string, file: string): LoadResult {
  const { records, problems } = parseTaxonomyCsv(text, file)
  return buildTaxonomy(records, problems)
}

/** Parses and validates taxonomy text in either format. */
export async function loadTaxonomyText(text: string, file: string, format: TaxonomyFormat): Promise<LoadResult> {
  if (format === 'csv') return loadCsvTaxonomy(text, file)
  const { records, problems } = await parseSkosTurtle(text, file)
  return buildTaxonomy(records, problems)
}

/**
 * Reads, parses and validates a taxonomy file (.csv or .ttl).
 * @throws Error when the file cannot be read or its extension is neither .csv nor .ttl
 */
export async function loadTaxonomyFile(file: string): Promise<LoadResult> {
  const format = formatOf(file)
  if (!format) throw new Error(`${file}: unknown taxonomy format (expected .csv or .ttl)`)
  return loadTaxonomyText(fs.readFileSync(file, 'utf8'), file, format)
}

/** Reads a rule file; a missing optional file gives empty rules (inference on). */
export function loadRulesFile(file: string | undefined): RuleSet {
  if (!file || !fs.existsSync(file)) return emptyRules(file ?? '(none)')
  return parseRules(fs.readFileSync(file, 'utf8'), file)
}

/** The rule file that goes with a taxonomy file: `NAME.rules` beside it, or the shipped rules for the shipped taxonomy. */
export function rulesFileFor(taxonomyFile: string): string | undefined {
  if (path.resolve(taxonomyFile) === SHIPPED_TAXONOMY) return SHIPPED_RULES
  const sibling = taxonomyFile.replace(/\.(csv|ttl|turtle)$/i, '.rules')
  return fs.existsSync(sibling) ? sibling : undefined
}

export interface LoadedMatcher {
  matcher: Matcher
  problems: Problem[]
}

/** Loads a taxonomy file with its rules and builds the matcher. */
export async function matcherForFile(taxonomyFile: string, rulesFile = rulesFileFor(taxonomyFile)): Promise<LoadedMatcher> {
  const loaded = await loadTaxonomyFile(taxonomyFile)
  const rules = loadRulesFile(rulesFile)
  const matcher = Matcher.build(loaded.taxonomy, rules)
  return { matcher, problems: [...loaded.problems, ...matcher.problems] }
}

let shipped: LoadedMatcher | undefined
/** The shipped taxonomy's matcher (CSV, so built synchronously), once per process. */
export function shippedMatcher(): LoadedMatcher {
  if (!shipped) {
    const loaded = loadCsvTaxonomy(fs.readFileSync(SHIPPED_TAXONOMY, 'utf8'), SHIPPED_TAXONOMY)
    const matcher = Matcher.build(loaded.taxonomy, loadRulesFile(SHIPPED_RULES))
    shipped = { matcher, problems: [...loaded.problems, ...matcher.problems] }
  }
  return shipped
}

export { Matcher } from './matcher.ts'
export type { ConceptMention, DocumentMapping, MapInput, MatchSpan, RejectedMatch, RollupMention } from './matcher.ts'
export type { Concept, LoadResult, Problem, Taxonomy } from './types.ts'
export { formatProblem } from './types.ts'
