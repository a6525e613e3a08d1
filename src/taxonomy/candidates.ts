/**
 * @module taxonomy/candidates
 * Candidate terms: phrases of one to three tokens that no label of the taxonomy covers and whose
 * document frequency rises in recent months against earlier ones. A pure function over
 * (document month, text) pairs; the map stage feeds it from the database.
 *
 * 1. Each document is tokenised as the matcher does; tokens covered by any taxonomy label are
 *    taken out, and phrases never cross a comma, a sentence or clause end.
 * 2. Phrases must look like noun phrases: no stop word or digit-only token at either end (inside
 *    only "of", "and", "as"), the last
 *    token a noun by its most frequent tag in the English lexicon of natural's tagger (or unknown
 *    to it, as new tool names are), the first not mainly a verb, adverb, pronoun or function word.
 * 3. Per phrase, the documents containing it in the recent window (default the last 6 months) and
 *    in the months before it (default back to 24 months in all) are compared by Dunning's log-likelihood ratio (G²); p-values are adjusted across all
 *    phrases tested (Benjamini–Hochberg). A phrase needs `minRecentDocs` recent documents, a rate
 *    at least `minRatio` times the earlier one, and an adjusted p below `alpha`.
 *    Of nested phrases, the longer is kept when its support is nearly the same, the shorter when
 *    the longer is only one of its contexts ("exposure to X").
 * 4. A second pass collects the survivors' monthly document frequency and example snippets.
 */
import { createRequire } from 'node:module'
import { benjaminiHochberg } from '../stats/benjamini-hochberg.ts'
import { F_BREAK, F_LIST } from './chars.ts'
import { lexiconTags } from './english.ts'
import { compareRates } from './log-likelihood-ratio.ts'
import type { Matcher } from './matcher.ts'
import { PhraseCounter, TOKEN_MIDDLE, TOKEN_STOP, TOKEN_VALID } from './phrase-counter.ts'

const require = createRequire(import.meta.url)
const NATURAL_STOPWORDS = (require('natural/lib/natural/util/stopwords.js') as { words: string[] }).words

/** Words that never start or end a candidate: natural's English stop words and job-advert filler (common practice, no source). */
export const CANDIDATE_STOPWORDS: ReadonlySet<string> = new Set([
  ...NATURAL_STOPWORDS,
  'will', 'just', 'able', 'within', 'across', 'including', 'etc', 'e.g', 'i.e', 'per', 'via', 'us', 'new', 'role',
  'roles', 'team', 'teams', 'work', 'working', 'year', 'years', 'month', 'months', 'day', 'days', 'week', 'weeks',
  'company', 'cooperative', 'experience', 'experienced', 'skills', 'skill', 'knowledge', 'ability', 'strong',
  'good', 'great', 'excellent', 'join', 'looking', 'help', 'support', 'must', 'plus', 'based', 'using', 'use',
  'used', 'want', 'need', 'needs', 'requirements', 'required', 'responsibilities', 'opportunity', 'please',
  'apply', 'salary', 'benefits', 'hours', 'full', 'part', 'time', 'ideal', 'candidate', 'candidates', 'you',
  'we', 'our', 'us', 'your', 'yours', 'any', 'every', 'one', 'two', 'three', 'first', 'second', 'level',
  'senior', 'junior', 'lead', 'head', 'manager', 'engineer', 'developer', 'analyst', 'specialist', 'officer',
  'assistant', 'coordinator', 'practice', 'practices', 'tools', 'tool', 'environment', 'projects', 'project',
  'training', 'course', 'request', 'requests', 'thanks', 'hello', 'hi', 'hands',
])

const MIDDLE_WORDS = new Set(['of', 'and', 'as', '&'])
const NOUN_TAGS = new Set(['NN', 'NNS', 'NNP', 'NNPS', 'VBG', 'CD', 'FW'])
const BAD_START = new Set(['VB', 'VBD', 'VBZ', 'VBP', 'RB', 'RBR', 'RBS', 'PRP', 'PRP$', 'WP', 'WDT', 'WRB', 'MD', 'DT', 'IN', 'CC', 'TO', 'UH'])

export interface CandidateDoc {
  /** YYYY-MM */
  month: string
  text: string
}

export interface CandidateOptions {
  /** months in the recent window, counted back from the latest month (default 6) */
  recentMonths?: number
  /** the latest month; default: the latest month among the documents */
  latestMonth?: string
  /** months looked at in all, counted back from the latest (default 24; recent + earlier) */
  windowMonths?: number
  /** documents with the phrase needed in the recent window (default 5) */
  minRecentDocs?: number
  /** recent rate over earlier rate needed (default 2; earlier rate smoothed by half a document) */
  minRatio?: number
  /** false-discovery rate for the adjusted p-values (default 0.05) */
  alpha?: number
  /** most candidates returned (default 50) */
  maxTerms?: number
  /** examples per candidate (default 3) */
  examples?: number
  /** phrases never proposed (e.g. terms a curator dismissed) */
  exclude?: ReadonlySet<string>
  /** most distinct phrases held while counting; singletons are dropped beyond it (default 2,000,000) */
  maxPhrases?: number
}

export interface CandidateTerm {
  term: string
  recentDf: number
  earlierDf: number
  recentDocs: number
  earlierDocs: number
  /** recentDf/recentDocs over (earlierDf+0.5)/earlierDocs */
  ratio: number
  g2: number
  pValue: number
  pAdjusted: number
  /** the ranking score: G² */
  score: number
  trend: { month: string; df: number; docs: number }[]
  examples: { month: string; snippet: string }[]
}

export interface CandidateResult {
  candidates: CandidateTerm[]
  recentFrom: string
  latestMonth: string
  recentDocs: number
  earlierDocs: number
  /** phrases with enough recent support that were tested */
  tested: number
}

/** Months between two YYYY-MM strings (b − a). */
function monthIndex(m: string): number {
  const y = Number(m.slice(0, 4))
  const mo = Number(m.slice(5, 7))
  return y * 12 + (mo - 1)
}
function monthOf(index: number): string {
  const y = Math.floor(index / 12)
  return `${y}-${String((index % 12) + 1).padStart(2, '0')}`
}

const WORDY = /^[\p{L}][\p{L}\p{N}+#./&]*$|^[\p{N}]+[\p{L}][\p{L}\p{N}]*$/u

/** The TOKEN_* properties of a folded token for the phrase counter (the rules of documentPhrases). */
function classifyToken(folded: string): number {
  let bits = 0
  if (WORDY.test(folded) && !(folded.length < 2 && !/[+#]/.test(folded))) bits |= TOKEN_VALID
  if (CANDIDATE_STOPWORDS.has(folded)) bits |= TOKEN_STOP
  if (MIDDLE_WORDS.has(folded)) bits |= TOKEN_MIDDLE
  return bits
}

/** The distinct candidate phrases of one document, with the offset of their first occurrence. */
export function documentPhrases(matcher: Matcher, text: string): { text: string; phrases: Map<string, number> } {
  const { text: norm, tokens } = matcher.labelCoverage(text)
  const phrases = new Map<string, number>()
  for (let i = 0; i < tokens.length; i++) {
    let phrase = ''
    for (let len = 1; len <= 3 && i + len <= tokens.length; len++) {
      const t = tokens[i + len - 1]!
      if (t.covered || !WORDY.test(t.folded) || t.folded.length < 2 && !/[+#]/.test(t.folded)) break
      if (len > 1 && (t.flags & (F_BREAK | F_LIST)) !== 0) break
      phrase = len === 1 ? t.folded : `${phrase} ${t.folded}`
      const first = tokens[i]!.folded
      // a stop word may sit inside a phrase only as a connector ("infrastructure as code")
      if (len === 3 && CANDIDATE_STOPWORDS.has(tokens[i + 1]!.folded) && !MIDDLE_WORDS.has(tokens[i + 1]!.folded)) break
      if (CANDIDATE_STOPWORDS.has(first) || CANDIDATE_STOPWORDS.has(t.folded)) continue
      if (!phrases.has(phrase)) phrases.set(phrase, tokens[i]!.start)
    }
  }
  return { text: norm, phrases }
}

/** True when a phrase looks like a noun phrase by the lexicon's tags (unknown words pass). */
function nounPhraseLike(phrase: string, tags: Map<string, string[]>): boolean {
  const words = phrase.split(' ')
  // the lexicon lists a word's most frequent tag first: the head must be a noun by that tag
  const last = tags.get(words[words.length - 1]!)
  if (last && last.length > 0 && !NOUN_TAGS.has(last[0]!.split('|')[0]!)) return false
  const first = tags.get(words[0]!)
  if (first && first.length > 0 && BAD_START.has(first[0]!.split('|')[0]!)) return false
  return true
}

/**
 * Finds rising candidate terms.
 * @param docs a function returning the documents (called twice: counting, then trends and examples)
 * @param matcher the taxonomy's matcher (its labels are what candidates must not be)
 * @example
 * findCandidateTerms(() => docs, matcher, { recentMonths: 6 }).candidates[0]?.term // => 'quantum annealing' (when it rises)
 */
export function findCandidateTerms(docs: () => Iterable<CandidateDoc>, matcher: Matcher, options: CandidateOptions = {}): CandidateResult {
  const recentMonths = options.recentMonths ?? 6
  const minRecent = options.minRecentDocs ?? 5
  const minRatio = options.minRatio ?? 2
  const alpha = options.alpha ?? 0.05
  const maxTerms = options.maxTerms ?? 50
  const exampleCount = options.examples ?? 3
  const maxPhrases = options.maxPhrases ?? 2_000_000
  let latest = options.latestMonth
  if (!latest) {
    for (const d of docs()) if (!latest || d.month > latest) latest = d.month
  }
  if (!latest) return { candidates: [], recentFrom: '', latestMonth: '', recentDocs: 0, earlierDocs: 0, tested: 0 }
  const recentFromIndex = monthIndex(latest) - recentMonths + 1
  const recentFrom = monthOf(recentFromIndex)
  const windowFrom = monthOf(monthIndex(latest) - Math.max(options.windowMonths ?? 24, recentMonths + 1) + 1)

  // pass 1: document frequencies, recent and earlier, and documents per month
  const counter = new PhraseCounter(classifyToken, maxPhrases)
  const docsPerMonth = new Map<string, number>()
  let recentDocs = 0
  let earlierDocs = 0
  for (const d of docs()) {
    if (d.month > latest || d.month < windowFrom) continue
    docsPerMonth.set(d.month, (docsPerMonth.get(d.month) ?? 0) + 1)
    const recent = d.month >= recentFrom
    if (recent) recentDocs++
    else earlierDocs++
    const { text, tokens, covered } = matcher.coverTokens(d.text)
    counter.addDocument(text, tokens, covered, recent)
  }
  const empty = { candidates: [], recentFrom, latestMonth: latest, recentDocs, earlierDocs, tested: 0 }
  if (recentDocs === 0 || earlierDocs === 0) return empty

  // test every phrase with enough recent support
  const tested: { term: string; a: number; b: number; g2: number; p: number; ratio: number }[] = []
  for (const { term, recent: a, earlier: b } of counter.recentCounts(minRecent)) {
    if (options.exclude?.has(term)) continue
    const ratio = a / recentDocs / ((b + 0.5) / earlierDocs)
    const cmp = compareRates(a, recentDocs, b, earlierDocs)
    if (cmp.direction <= 0) continue
    tested.push({ term, a, b, g2: cmp.g2, p: cmp.pValue, ratio })
  }
  if (tested.length === 0) return empty
  const adjusted = benjaminiHochberg(tested.map((t) => t.p), alpha).adjusted
  let kept = tested.map((t, i) => ({ ...t, pAdjusted: adjusted[i]! })).filter((t) => t.pAdjusted <= alpha && t.ratio >= minRatio)
  const tags = lexiconTags(new Set(kept.flatMap((t) => t.term.split(' '))))
  kept = kept.filter((t) => nounPhraseLike(t.term, tags))
  // a phrase inside a longer kept phrase with nearly the same support adds nothing
  kept.sort((x, y) => y.g2 - x.g2 || y.term.split(' ').length - x.term.split(' ').length || x.term.localeCompare(y.term))
  const chosen: typeof kept = []
  for (const t of kept) {
    // inside a longer kept phrase with nearly the same support: the longer one is the term
    const inside = chosen.some((c) => c.term !== t.term && ` ${c.term} `.includes(` ${t.term} `) && c.a >= 0.8 * t.a)
    // around a kept phrase with far less support: only one of its contexts ("exposure to X")
    const around = chosen.some((c) => c.term !== t.term && ` ${t.term} `.includes(` ${c.term} `) && t.a < 0.5 * c.a)
    if (!inside && !around) chosen.push(t)
    if (chosen.length >= maxTerms) break
  }

  // pass 2: monthly document frequency and examples for the chosen terms
  const chosenSet = new Map(chosen.map((c) => [c.term, { months: new Map<string, number>(), examples: [] as { month: string; snippet: string }[] }]))
  // only documents that contain a chosen term's first word can contain the term: find them with
  // one regular expression before tokenising
  const firstWords = [...new Set(chosen.map((c) => c.term.split(' ')[0]!))].map((w) => w.replace(/[.*+?^${}()|[\]\\/]/g, '\\$&'))
  const prefilter = firstWords.length ? new RegExp(firstWords.join('|'), 'i') : null
  // (no chosen term: no second pass)
  for (const d of prefilter ? docs() : []) {
    if (d.month > latest || d.month < windowFrom || !prefilter!.test(d.text)) continue
    const { text, phrases } = documentPhrases(matcher, d.text)
    for (const [term, offset] of phrases) {
      const entry = chosenSet.get(term)
      if (!entry) continue
      entry.months.set(d.month, (entry.months.get(d.month) ?? 0) + 1)
      if (d.month >= recentFrom) {
        entry.examples.push({ month: d.month, snippet: snippet(text, offset, term.length) })
        // keep the latest examples
        entry.examples.sort((x, y) => (x.month < y.month ? 1 : -1))
        if (entry.examples.length > exampleCount) entry.examples.length = exampleCount
      }
    }
  }
  const months = [...docsPerMonth.keys()].sort()
  const candidates: CandidateTerm[] = chosen.map((c) => {
    const e = chosenSet.get(c.term)!
    return {
      term: c.term,
      recentDf: c.a,
      earlierDf: c.b,
      recentDocs,
      earlierDocs,
      ratio: c.ratio,
      g2: c.g2,
      pValue: c.p,
      pAdjusted: c.pAdjusted,
      score: c.g2,
      trend: months.map((m) => ({ month: m, df: e.months.get(m) ?? 0, docs: docsPerMonth.get(m) ?? 0 })),
      examples: e.examples,
    }
  })
  return { candidates, recentFrom, latestMonth: latest, recentDocs, earlierDocs, tested: tested.length }
}

/** About 60 characters either side of an occurrence, cut at word boundaries, on one line. */
function snippet(text: string, offset: number, length: number): string {
  let from = Math.max(0, offset - 60)
  let to = Math.min(text.length, offset + length + 60)
  if (from > 0) from = text.indexOf(' ', from) + 1 || from
  if (to < text.length) to = text.lastIndexOf(' ', to) > offset + length ? text.lastIndexOf(' ', to) : to
  return `${from > 0 ? '…' : ''}${text.slice(from, to).replace(/\s+/g, ' ').trim()}${to < text.length ? '…' : ''}`
}
