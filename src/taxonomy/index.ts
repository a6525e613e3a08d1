/**
 * @module taxonomy
 * Entry points: load a taxonomy (CSV or SKOS Turtle) with its rule file, validate it, and build
 * the matcher. The shipped taxonomy lives in taxonomy/skills.csv with its rules in
 * taxonomy/rules.txt.
 */
import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { parseTaxonomyCsv } from './csv-loader.ts'
import { Matcher } from './matcher.ts'
import { emptyRules, parseRules, type RuleSet } from './rules.ts'
import { parseSkosTurtle } from './skos-loader.ts'
import type { LoadResult, Problem } from './types.ts'
import { buildTaxonomy } from './validate.ts'

const here = path.dirname(fileURLToPath(import.meta.url))
/** The shipped taxonomy and its rule file. */
export const SHIPPED_TAXONOMY = path.resolve(here, '../../taxonomy/skills.csv')
export const SHIPPED_RULES = path.resolve(here, '../../taxonomy/rules.txt')

export type TaxonomyFormat = 'csv' | 'ttl'

/** Taxonomy format from a file name (.csv, or .ttl/.turtle). */
export function formatOf(file: string): TaxonomyFormat | undefined {
  const ext = path.extname(file).toLowerCase()
  if (ext === '.csv') return 'csv'
  if (ext === '.ttl' || ext === '.turtle') return 'ttl'
  return undefined
}

/**
 * Parses and validates taxonomy text.
 * @example
 * loadTaxonomyText('id,prefLabel,altLabel,hiddenLabel,broader,type\npython,Python,,,,hard\n', 'x.csv', 'csv').taxonomy.concepts.length // => 1
 */
export function loadTaxonomyText(text: string, file: string, format: TaxonomyFormat): LoadResult {
  const { records, problems } = format === 'csv' ? parseTaxonomyCsv(text, file) : parseSkosTurtle(text, file)
  return buildTaxonomy(records, problems)
}

/**
 * Reads, parses and validates a taxonomy file.
 * @throws Error when the file cannot be read or its extension is neither .csv nor .ttl
 */
export function loadTaxonomyFile(file: string): LoadResult {
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
export function matcherForFile(taxonomyFile: string, rulesFile = rulesFileFor(taxonomyFile)): LoadedMatcher {
  const loaded = loadTaxonomyFile(taxonomyFile)
  const rules = loadRulesFile(rulesFile)
  const matcher = Matcher.build(loaded.taxonomy, rules)
  return { matcher, problems: [...loaded.problems, ...matcher.problems] }
}

let shipped: LoadedMatcher | undefined
/** The shipped taxonomy's matcher, built once per process. */
export function shippedMatcher(): LoadedMatcher {
  shipped ??= matcherForFile(SHIPPED_TAXONOMY, SHIPPED_RULES)
  return shipped
}

export { Matcher } from './matcher.ts'
export type { ConceptMention, DocumentMapping, MapInput, MatchSpan, RejectedMatch, RollupMention } from './matcher.ts'
export type { Concept, LoadResult, Problem, Taxonomy } from './types.ts'
export { formatProblem } from './types.ts'
