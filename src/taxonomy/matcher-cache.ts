/**
 * @module taxonomy/matcher-cache
 * The compiled matcher kept in the database between runs. Compiling the matcher of a 20,000-concept,
 * 80,000-label taxonomy (reading and validating the concepts, the lexicon check, tokenising and
 * stemming every label, the tries, the roll-up ancestors) took 2.1-3.0 s of an incremental map of
 * 10,000 postings on the one-million-posting benchmark database; restoring it from its serialized
 * form (v8.serialize, 14.6 MB) takes about 0.25 s. Worker threads of a bulk map restore it from the
 * same bytes instead of each compiling it.
 *
 * The bytes are valid for one taxonomy version (the row is keyed by it and deleted when the version
 * changes) and one build of the code that compiles them: the key carries a hash of the source files
 * of the compilation and of the Node.js and V8 versions, so any change to those sources, or an
 * upgrade of Node.js, compiles afresh. Bytes that cannot be restored are compiled afresh too.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import { createRequire } from 'node:module'
import v8 from 'node:v8'
import type { MatcherData } from './matcher-build.ts'
import { Matcher } from './matcher.ts'
import { Vocabulary, type VocabularyParts } from './tokenizer.ts'
import { FrozenTrie } from './trie.ts'
import type { Taxonomy } from './types.ts'
import { BUILD } from '../util/build.ts'

/** The modules whose code decides the compiled data (this one included: it decides the byte layout). */
const COMPILING_MODULES = [
  './matcher-cache.ts',
  './matcher-build.ts',
  './matcher.ts',
  './policy.ts',
  './rules.ts',
  './stem.ts',
  './tokenizer.ts',
  './chars.ts',
  './trie.ts',
  './english.ts',
  './validate.ts',
  './store.ts',
  '../db/taxonomy.ts',
]

let codeKey: string | null | undefined

/**
 * A hash of the compiling modules' source (null when one cannot be read). The bundled CLI carries
 * the key of the sources it was built from (util/build.ts), as it has no sources to read.
 */
export function matcherSourceKey(): string | null {
  if (BUILD) return BUILD.matcherSourceKey
  try {
    const hash = crypto.createHash('sha256')
    for (const module of COMPILING_MODULES) hash.update(fs.readFileSync(new URL(module, import.meta.url)))
    return hash.digest('hex')
  } catch {
    return null
  }
}

/**
 * A hash of everything besides the stored taxonomy that decides the compiled matcher: the
 * compiling modules' source, the version of the package whose stemmer and lexicon they use, the
 * Node.js and V8 versions. Null when a source file cannot be read (then nothing is cached).
 */
export function matcherCodeKey(): string | null {
  if (codeKey !== undefined) return codeKey
  const source = matcherSourceKey()
  if (source === null) return (codeKey = null)
  try {
    const hash = crypto.createHash('sha256')
    hash.update(source)
    const require = createRequire(import.meta.url)
    hash.update(String((require('natural/package.json') as { version: string }).version))
    hash.update(`${process.versions.node} ${process.versions.v8}`)
    codeKey = hash.digest('hex').slice(0, 32)
  } catch {
    codeKey = null
  }
  return codeKey
}

interface TrieParts {
  root: Int32Array
  childStart: Int32Array
  childTok: Int32Array
  childNode: Int32Array
  terminal: Int32Array
}

type PackedData = Omit<MatcherData, 'vocab' | 'stemVocab' | 'exact' | 'stem'> & {
  vocab: VocabularyParts
  stemVocab: VocabularyParts
  exact: TrieParts
  stem: TrieParts
}

const trieParts = (t: FrozenTrie): TrieParts => ({ root: t.root, childStart: t.childStart, childTok: t.childTok, childNode: t.childNode, terminal: t.terminal })

/**
 * The matcher's taxonomy and compiled data as bytes ({@link unpackMatcher} restores it).
 *
 * @example
 * ```ts
 * unpackMatcher(packMatcher(matcher)).map({ text }) // => the same mapping as matcher.map({ text })
 * ```
 */
export function packMatcher(matcher: Matcher): Buffer {
  const d = matcher.compiled
  const data: PackedData = { ...d, vocab: d.vocab.parts(), stemVocab: d.stemVocab.parts(), exact: trieParts(d.exact), stem: trieParts(d.stem) }
  return v8.serialize({ concepts: matcher.taxonomy.concepts, data })
}

/**
 * The matcher {@link packMatcher} wrote.
 * @throws Error when the bytes are not a packed matcher
 */
export function unpackMatcher(bytes: Uint8Array): Matcher {
  const raw = v8.deserialize(bytes) as { concepts?: Taxonomy['concepts']; data?: PackedData }
  const data = raw?.data
  if (!Array.isArray(raw?.concepts) || !data || !Array.isArray(data.vocab?.strings) || !(data.exact?.root instanceof Int32Array)) {
    throw new Error('not a packed matcher')
  }
  // the concepts are the very objects the data's `concepts` holds (one serialization keeps identity)
  const taxonomy: Taxonomy = { concepts: raw.concepts, byId: new Map(raw.concepts.map((c) => [c.id, c])) }
  const trie = (t: TrieParts) => new FrozenTrie(t.root, t.childStart, t.childTok, t.childNode, t.terminal)
  return Matcher.fromData(taxonomy, {
    ...data,
    vocab: Vocabulary.fromParts(data.vocab),
    stemVocab: Vocabulary.fromParts(data.stemVocab),
    exact: trie(data.exact),
    stem: trie(data.stem),
  })
}
