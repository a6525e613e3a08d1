/**
 * @module taxonomy/stem
 * Porter stemming for the light inflection handling of soft-skill and multi-word labels
 * ("negotiating" → negotiation). The stemmer is natural's Porter implementation, loaded from its
 * own file: loading the `natural` package index would pull in dotenv, which prints a banner on
 * stdout and would spoil `--json` output. Results are memoised: a plain Porter stem per token runs
 * at a few MB/s, while the matcher stems only tokens that can reach a stemmed label.
 */
import { createRequire } from 'node:module'

const require = createRequire(import.meta.url)
const porter = require('natural/lib/natural/stemmers/porter_stemmer.js') as { stem(word: string): string }

const MEMO_LIMIT = 200_000
const memo = new Map<string, string>()

/**
 * Porter stem of a lower-case word, memoised. Words with characters other than a–z are returned
 * unchanged (the algorithm is defined for English letters only).
 * @example
 * porterStem('negotiating') // => 'negoti'
 * porterStem('negotiation') // => 'negoti'
 */
export function porterStem(word: string): string {
  let s = memo.get(word)
  if (s !== undefined) return s
  s = /^[a-z]+$/.test(word) ? porter.stem(word) : word
  if (memo.size >= MEMO_LIMIT) memo.clear()
  memo.set(word, s)
  return s
}
