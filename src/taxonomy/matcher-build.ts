/**
 * @module taxonomy/matcher-build
 * Compiles a taxonomy and its rules into the matcher's flat data: vocabulary, exact and stemmed
 * token tries, per-label policies with their words turned into token ids, and each concept's
 * ancestors for the broader rollup. Done once per taxonomy.
 */
import { commonEnglishWords } from './english.ts'
import { applyRule, inferredPolicy, needsLexiconCheck, type LabelPolicy } from './policy.ts'
import { emptyRules, type RuleSection, type RuleSet } from './rules.ts'
import { porterStem } from './stem.ts'
import { labelTokens, Vocabulary } from './tokenizer.ts'
import { FrozenTrie, TrieBuilder } from './trie.ts'
import type { Concept, Problem, Taxonomy } from './types.ts'

export interface CompiledPolicy {
  /** 0 any, 1 exact, 2 exact or all capitals */
  caseMode: 0 | 1 | 2
  /** 0 never, 1 always, 2 at the start of a sentence */
  when: 0 | 1 | 2
  near: boolean
  skills: boolean
  nearIds: Set<number>
  window: number
  notNext: Set<number>
  notPrev: Set<number>
  stemExclude: Set<string>
  source: LabelPolicy
}

export interface MatcherData {
  vocab: Vocabulary
  stemVocab: Vocabulary
  /** stem id of each vocabulary token, -1 when its stem starts no stemmed label path */
  vocabStem: Int32Array
  /** 16-bit hashes of three-letter prefixes that can lead to a stemmed label */
  stemGate: Uint8Array
  hasStem: boolean
  exact: FrozenTrie
  stem: FrozenTrie
  labelConcept: Int32Array
  /** per label entry, bit k set when the label has a comma or list separator before token k */
  labelLists: Int32Array
  /** letters and digits in each label entry (its size, for rules about short labels) */
  labelLetters: Int32Array
  labelDisplay: string[]
  /** written token variants per label entry (labels differing only in case share an entry) */
  labelWritten: string[][][]
  labelPolicy: (CompiledPolicy | null)[]
  concepts: Concept[]
  conceptIndex: Map<string, number>
  conceptHard: Uint8Array
  ancestors: Int32Array[]
  problems: Problem[]
}

/** Same three-letter prefix hash the matcher computes on text. */
export function prefixGate(folded: string): number {
  return ((folded.charCodeAt(0) * 31 + folded.charCodeAt(1)) * 31 + folded.charCodeAt(2)) & 0xffff
}

export interface CompileOptions {
  /**
   * Lower-case words already known to be ordinary English (from an earlier `commonWordsFor`),
   * so that worker threads need not scan the lexicon again.
   */
  commonWords?: ReadonlySet<string>
}

/** The one-token labels of a taxonomy that the inference asks the English lexicon about, answered. */
export function commonWordsFor(taxonomy: Taxonomy): Set<string> {
  const ask = new Set<string>()
  for (const c of taxonomy.concepts) {
    for (const l of [c.prefLabel, ...c.altLabels, ...c.hiddenLabels]) {
      const { written, folded } = labelTokens(l)
      if (needsLexiconCheck(written, folded)) ask.add(folded[0]!)
    }
  }
  return commonEnglishWords(ask)
}

/** Compiles the matcher data (see module doc). */
export function compileMatcher(taxonomy: Taxonomy, rules: RuleSet = emptyRules(), options: CompileOptions = {}): MatcherData {
  const problems: Problem[] = [...rules.problems]
  const commonWords = options.commonWords ?? (rules.infer ? commonWordsFor(taxonomy) : new Set<string>())
  const concepts = taxonomy.concepts
  const conceptIndex = new Map(concepts.map((c, i) => [c.id, i]))
  const vocab = new Vocabulary(4096)
  const stemVocab = new Vocabulary(1024)
  const exact = new TrieBuilder()
  const stemTrie = new TrieBuilder()

  // rule sections by concept and by (concept, label key)
  const conceptRules = new Map<string, RuleSection[]>()
  const labelRules = new Map<string, RuleSection>()
  for (const s of rules.sections) {
    const c = taxonomy.byId.get(s.conceptId)
    if (!c) {
      problems.push({ file: rules.file, line: s.line, message: `rule for unknown concept "${s.conceptId}" ignored`, severity: 'warning' })
      continue
    }
    if (s.label === undefined) {
      conceptRules.set(s.conceptId, [...(conceptRules.get(s.conceptId) ?? []), s])
      continue
    }
    const key = labelTokens(s.label).folded.join(' ')
    const labels = [c.prefLabel, ...c.altLabels, ...c.hiddenLabels]
    if (!labels.some((l) => labelTokens(l).folded.join(' ') === key)) {
      problems.push({ file: rules.file, line: s.line, message: `"${s.label}" is not a label of concept "${s.conceptId}"; rule ignored`, severity: 'warning' })
      continue
    }
    labelRules.set(`${s.conceptId}\u0000${key}`, s)
  }

  const labelConcept: number[] = []
  const labelLists: number[] = []
  const labelDisplay: string[] = []
  const labelWritten: string[][][] = []
  const policies: LabelPolicy[] = []
  const stemmed: { entry: number; path: number[] }[] = []
  const entryByKey = new Map<string, number>()
  const gate = new Uint8Array(65536)

  concepts.forEach((c, ci) => {
    const labels: [string, boolean][] = []
    if (!c.unmatchedPrefLabel) labels.push([c.prefLabel, true])
    for (const l of c.altLabels) labels.push([l, false])
    for (const l of c.hiddenLabels) labels.push([l, false])
    for (const [label, isPref] of labels) {
      const { written, folded, lists } = labelTokens(label)
      if (folded.length === 0) continue
      const key = folded.join(' ')
      const existing = entryByKey.get(key)
      if (existing !== undefined) {
        if (labelConcept[existing] === ci) {
          labelWritten[existing]!.push(written)
          labelLists[existing]! |= lists
        }
        continue // another concept's label: the validator has reported it
      }
      const entry = labelConcept.length
      entryByKey.set(key, entry)
      labelConcept.push(ci)
      labelLists.push(lists)
      labelDisplay.push(label)
      labelWritten.push([written])
      exact.insert(folded.map((t) => vocab.add(t)), entry)
      let policy = inferredPolicy({ written, folded, type: c.type, isPref }, rules, commonWords)
      for (const r of conceptRules.get(c.id) ?? []) policy = applyRule(policy, r, rules)
      const lr = labelRules.get(`${c.id}\u0000${key}`)
      if (lr) policy = applyRule(policy, lr, rules)
      policies.push(policy)
      if (policy.stem) {
        const stems = folded.map((t) => porterStem(t))
        const path = stems.map((s) => stemVocab.add(s))
        const old = stemTrie.insert(path, entry)
        if (old >= 0 && labelConcept[old] !== ci) {
          problems.push({ file: c.source?.file ?? '(taxonomy)', line: c.source?.line ?? 0, field: 'altLabel', message: `inflected forms of "${label}" (${c.id}) and "${labelDisplay[old]}" (${concepts[labelConcept[old]!]!.id}) coincide; both match only as written`, severity: 'warning' })
          stemTrie.clear(path)
        } else if (old < 0) stemmed.push({ entry, path })
        for (let k = 0; k < folded.length; k++) {
          for (const w of [folded[k]!, stems[k]!]) if (w.length >= 3) gate[prefixGate(w)] = 1
        }
      }
    }
  })

  // number variants of multi-word hard labels in lower case ("vector database" / "vector
  // databases"): the head noun flipped, added after every real label so that none is shadowed
  const entries = labelConcept.length
  for (let entry = 0; entry < entries; entry++) {
    const c = concepts[labelConcept[entry]!]!
    const written = labelWritten[entry]![0]!
    if (c.type !== 'hard' || policies[entry]!.stem || written.length < 2) continue
    if (!written.every((w) => /^[a-z]+$/.test(w))) continue
    const head = numberVariant(written[written.length - 1]!)
    if (!head) continue
    const folded = [...written.slice(0, -1), head]
    const key = folded.join(' ')
    if (entryByKey.has(key)) continue
    entryByKey.set(key, entry)
    exact.insert(folded.map((t) => vocab.add(t)), entry)
  }

  // policy words become token ids (they join the vocabulary so the scanner can see them)
  const idCache = new Map<readonly string[], Set<number>>()
  const idsOf = (words: readonly string[]): Set<number> => {
    let out = idCache.get(words)
    if (out) return out
    out = new Set<number>()
    for (const w of words) for (const t of labelTokens(w).folded) out.add(vocab.add(t))
    idCache.set(words, out)
    return out
  }
  const excludeCache = new Map<readonly string[], Set<string>>()
  const excludeOf = (words: readonly string[]): Set<string> => {
    let out = excludeCache.get(words)
    if (!out) {
      out = new Set(words.map((w) => w.toLowerCase()))
      excludeCache.set(words, out)
    }
    return out
  }
  const labelPolicy: (CompiledPolicy | null)[] = policies.map((p) => {
    const free = p.caseMode === 'any' && p.when === 'never' && p.notNext.length === 0 && p.notPrev.length === 0 && !p.stem
    if (free) return null
    return {
      caseMode: p.caseMode === 'any' ? 0 : p.caseMode === 'exact' ? 1 : 2,
      when: p.when === 'never' ? 0 : p.when === 'always' ? 1 : 2,
      near: p.near,
      skills: p.skills,
      nearIds: p.near ? idsOf(p.nearWords) : new Set<number>(),
      window: p.window,
      notNext: idsOf(p.notNext),
      notPrev: idsOf(p.notPrev),
      stemExclude: excludeOf(p.stemExclude),
      source: p,
    } satisfies CompiledPolicy
  })

  const vocabStem = new Int32Array(vocab.size).fill(-1)
  if (stemmed.length > 0) {
    for (let id = 0; id < vocab.size; id++) vocabStem[id] = stemVocab.get(porterStem(vocab.strings[id]!))
  }

  return {
    vocab,
    stemVocab,
    vocabStem,
    stemGate: gate,
    hasStem: stemmed.length > 0,
    exact: exact.freeze(vocab.size),
    stem: stemTrie.freeze(stemVocab.size),
    labelConcept: Int32Array.from(labelConcept),
    labelLists: Int32Array.from(labelLists),
    labelLetters: Int32Array.from(labelWritten.map((v) => v[0]!.join('').replace(/[^\p{L}\p{N}]/gu, '').length)),
    labelDisplay,
    labelWritten,
    labelPolicy,
    concepts,
    conceptIndex,
    conceptHard: Uint8Array.from(concepts.map((c) => (c.type === 'hard' ? 1 : 0))),
    ancestors: ancestorsOf(concepts, conceptIndex),
    problems,
  }
}

/**
 * The other grammatical number of an English noun, by the regular rules (irregular plurals are
 * left to altLabels): databases ↔ database, policies ↔ policy, switches ↔ switch. Undefined for
 * words the rules cannot decide safely (ending in -ss, -us, -is, or too short).
 * @example
 * numberVariant('databases') // => 'database'
 * numberVariant('policy') // => 'policies'
 */
export function numberVariant(word: string): string | undefined {
  if (word.length < 4 || /(ss|us|is|ics)$/.test(word)) return undefined
  if (/[^aeiou]ies$/.test(word)) return word.slice(0, -3) + 'y'
  if (/(ches|shes|xes|zes|sses)$/.test(word)) return word.slice(0, -2)
  if (word.endsWith('s')) return word.slice(0, -1)
  if (/[^aeiou]y$/.test(word)) return word.slice(0, -1) + 'ies'
  if (/(ch|sh|x|z|s)$/.test(word)) return word + 'es'
  return word + 's'
}

/** Transitive broader concepts of each concept (the validator guarantees no cycles). */
function ancestorsOf(concepts: Concept[], index: Map<string, number>): Int32Array[] {
  const memo: (Int32Array | undefined)[] = new Array(concepts.length)
  const visit = (ci: number, guard: Set<number>): Int32Array => {
    const known = memo[ci]
    if (known) return known
    const out = new Set<number>()
    guard.add(ci)
    for (const b of concepts[ci]!.broader) {
      const bi = index.get(b)
      if (bi === undefined || guard.has(bi)) continue
      out.add(bi)
      for (const a of visit(bi, guard)) out.add(a)
    }
    guard.delete(ci)
    const arr = Int32Array.from(out)
    memo[ci] = arr
    return arr
  }
  return concepts.map((_, ci) => visit(ci, new Set()))
}

