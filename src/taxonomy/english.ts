/**
 * @module taxonomy/english
 * "Is this label also an ordinary English word?" — used to infer safe matching rules for labels
 * of imported taxonomies (Excel, Spark, Swift, Rust ...). The word list is the English lexicon
 * shipped with natural's Brill part-of-speech tagger (about 92,000 words with Penn Treebank
 * tags), read from its JSON file directly so that natural's index (and its dotenv banner) is
 * never loaded. Parsing that 4 MB object costs about half a second, so the file is scanned once
 * for just the words asked about.
 */
import fs from 'node:fs'
import { createRequire } from 'node:module'

const require = createRequire(import.meta.url)
const LEXICON = require.resolve('natural/lib/natural/brill_pos_tagger/data/English/lexicon_from_posjs.json')
const NOT_COMMON = new Set(['NNP', 'NNPS', 'FW', 'SYM', 'LS'])

/**
 * Part-of-speech tags of each asked word found in the lexicon (keys are case-sensitive there;
 * ask in lower case).
 */
export function lexiconTags(words: Iterable<string>): Map<string, string[]> {
  const want = new Set(words)
  const found = new Map<string, string[]>()
  if (want.size === 0) return found
  const lengths = new Set([...want].map((w) => w.length))
  const text = fs.readFileSync(LEXICON, 'latin1')
  // the file is pretty-printed: each entry starts with a newline, four spaces and the quoted key
  let i = 0
  for (;;) {
    const q = text.indexOf('\n    "', i)
    if (q < 0) break
    const ks = q + 6
    const ke = text.indexOf('"', ks)
    if (ke < 0) break
    if (lengths.has(ke - ks)) {
      const key = text.slice(ks, ke)
      if (want.has(key)) {
        const close = text.indexOf(']', ke)
        found.set(key, (text.slice(ke + 1, close).match(/"[^"]+"/g) ?? []).map((t) => t.slice(1, -1)))
      }
    }
    i = ke + 1
  }
  return found
}

/**
 * The asked words that the lexicon lists with at least one tag other than a proper-noun, foreign
 * word, symbol or list-marker tag, i.e. that are used as ordinary English words.
 * @example
 * commonEnglishWords(['spark', 'kubernetes']) // => Set { 'spark' }
 */
export function commonEnglishWords(words: Iterable<string>): Set<string> {
  const out = new Set<string>()
  for (const [w, tags] of lexiconTags(words)) if (tags.some((t) => !NOT_COMMON.has(t))) out.add(w)
  return out
}
