/**
 * @module taxonomy/matcher
 * Maps text to skill mentions. Built once per taxonomy (and rule set): every label is tokenised
 * into integer token ids and put into one token trie; labels that admit inflected forms are also
 * put, as Porter stems, into a second trie. Matching a document scans it once (see tokenizer),
 * walks the tries at each token, keeps the longest match that passes its label's case and veto
 * rules, then settles matches that need evidence (a technical neighbour in the same sentence, or
 * another hard skill within the window). A document counts each concept once (presence), with
 * its repetitions and spans for display, and broader concepts are rolled up and marked as such.
 *
 * Offsets are UTF-16 offsets into the NFKC form of the field (the input itself whenever it is
 * already NFKC, e.g. plain ASCII).
 */
import { F_BREAK, F_LIST, F_SENTENCE, FOLD, foldString } from './chars.ts'
import { compileMatcher, type CompiledPolicy, type CompileOptions, type MatcherData } from './matcher-build.ts'
import type { RuleSet } from './rules.ts'
import { porterStem } from './stem.ts'
import { TokenBuffer, scanText } from './tokenizer.ts'
import type { Problem, SkillType, Taxonomy } from './types.ts'

export interface MatchSpan {
  start: number
  end: number
  /** the matched text as it appears (NFKC) */
  text: string
  /** the taxonomy label it matched, as written there */
  label: string
  field: 'text' | 'skills'
  /** `stem` when the match used inflected forms */
  via: 'exact' | 'stem'
}

export interface ConceptMention {
  conceptId: string
  prefLabel: string
  type: SkillType
  rollup: false
  /** how many times the concept was matched in the document (it counts once for demand) */
  count: number
  /** offset of the first match in the text field, else in the skills field */
  firstOffset: number
  /** `text` when matched in the text at least once, else `skills` (the schema.org field) */
  via: 'text' | 'skills'
  /** every match (empty when mapping with `spans: false`) */
  spans: MatchSpan[]
}

export interface RollupMention {
  conceptId: string
  prefLabel: string
  type: SkillType
  rollup: true
  /** the directly mentioned narrower concepts that imply this one */
  via: string[]
}

export interface RejectedMatch {
  conceptId: string
  label: string
  start: number
  end: number
  text: string
  field: 'text' | 'skills'
  reason: 'case' | 'not-next' | 'not-prev' | 'stem-exclude' | 'no evidence'
}

export interface DocumentMapping {
  mentions: ConceptMention[]
  rollups: RollupMention[]
  /** candidate matches that a rule turned down (only with `explain`) */
  rejected?: RejectedMatch[]
}

export interface MapOptions {
  /** also return what the rules turned down */
  explain?: boolean
  /** build the span objects (default true); presence, counts and first offsets come either way */
  spans?: boolean
  /** list the broader concepts of the roll-up (default true); the map stage derives them itself (db/ancestry.ts) */
  rollups?: boolean
}

export interface MapInput {
  text: string
  /** a schema.org JobPosting `skills` value: text, DefinedTerm objects, or an array of them */
  skills?: unknown
}

const MAX_CANDIDATES = 8
const NON_ASCII = /[^\x00-\x7f]/

interface FieldState {
  text: string
  field: 'text' | 'skills'
  listMode: boolean
}

/** Matches per field, in token order. */
class MatchList {
  count = 0
  label: Int32Array = new Int32Array(64)
  from: Int32Array = new Int32Array(64)
  to: Int32Array = new Int32Array(64)
  state: Uint8Array = new Uint8Array(64) // 0 confirmed, 1 pending, 2 rejected, 3 pending on near evidence only (case differs), 4 rejected (case)
  viaStem: Uint8Array = new Uint8Array(64)

  push(label: number, from: number, to: number, state: number, viaStem: boolean): void {
    if (this.count === this.label.length) {
      const n = this.count * 2
      const grow32 = (a: Int32Array) => { const b = new Int32Array(n); b.set(a); return b }
      const grow8 = (a: Uint8Array) => { const b = new Uint8Array(n); b.set(a); return b }
      this.label = grow32(this.label); this.from = grow32(this.from); this.to = grow32(this.to)
      this.state = grow8(this.state); this.viaStem = grow8(this.viaStem)
    }
    const i = this.count++
    this.label[i] = label; this.from[i] = from; this.to[i] = to; this.state[i] = state; this.viaStem[i] = viaStem ? 1 : 0
  }
}

export class Matcher {
  readonly taxonomy: Taxonomy
  /** rule-file problems and build warnings (labels whose stemmed forms collide, ...) */
  readonly problems: Problem[]
  private readonly d: MatcherData
  private readonly buf = new TokenBuffer()
  private covered = new Uint8Array(4096)
  private readonly matches = new MatchList()
  private readonly candLen = new Int32Array(MAX_CANDIDATES * 2)
  private readonly candLabel = new Int32Array(MAX_CANDIDATES * 2)
  private readonly candStem = new Uint8Array(MAX_CANDIDATES * 2)
  private withSpans = true

  private constructor(taxonomy: Taxonomy, data: MatcherData) {
    this.taxonomy = taxonomy
    this.d = data
    this.problems = data.problems
  }

  /**
   * Builds the matcher for a taxonomy (once; reuse it for every document).
   * @example
   * const m = Matcher.build(taxonomy, rules)
   * m.map({ text: 'Kubernetes and Terraform' }).mentions.map((x) => x.conceptId) // => ['kubernetes', 'terraform']
   */
  static build(taxonomy: Taxonomy, rules?: RuleSet, options: CompileOptions = {}): Matcher {
    return new Matcher(taxonomy, compileMatcher(taxonomy, rules, options))
  }

  /** The matcher of already compiled data (the matcher cache restores it; see matcher-cache.ts). */
  static fromData(taxonomy: Taxonomy, data: MatcherData): Matcher {
    return new Matcher(taxonomy, data)
  }

  /** The compiled data, for the matcher cache; do not modify it. */
  get compiled(): MatcherData {
    return this.d
  }

  get labelCount(): number {
    return this.d.labelConcept.length
  }

  /** Maps one document: its text and, when present, its schema.org `skills` value. */
  map(input: MapInput, options: MapOptions = {}): DocumentMapping {
    const agg = new Map<number, ConceptMention>()
    const rejected: RejectedMatch[] | undefined = options.explain ? [] : undefined
    this.withSpans = options.spans !== false
    this.matchField({ text: input.text ?? '', field: 'text', listMode: false }, agg, rejected)
    if (input.skills !== undefined && input.skills !== null) {
      const { entries, codes } = skillEntries(input.skills)
      if (entries.length > 0) this.matchField({ text: entries.join('\n'), field: 'skills', listMode: true }, agg, rejected)
      for (const code of codes) {
        const ci = this.d.conceptIndex.get(code)
        if (ci !== undefined && !agg.has(ci)) agg.set(ci, this.mention(ci, -1, 'skills'))
      }
    }
    return this.finish(agg, rejected, options.rollups !== false)
  }

  /** Shorthand for `map({ text })`. */
  mapText(text: string, options: MapOptions = {}): DocumentMapping {
    return this.map({ text }, options)
  }

  /** Token-level match count only (no result objects); used by the benchmark to time the core. */
  countMatches(text: string): number {
    const norm = NON_ASCII.test(text) ? text.normalize('NFKC') : text
    this.scanAndMatch(norm, false, undefined, { text: norm, field: 'text', listMode: false })
    return this.matches.count
  }

  /** True when any label of the taxonomy occurs in the text (rules aside); allocates nothing per token. */
  containsAnyLabel(text: string): boolean {
    const norm = NON_ASCII.test(text) ? text.normalize('NFKC') : text
    const d = this.d
    const buf = this.buf
    scanText(norm, d.vocab, buf)
    const n = buf.count
    for (let i = 0; i < n; i++) {
      const id = buf.id[i]!
      let node = id >= 0 ? d.exact.root[id]! : -1
      let k = i + 1
      while (node >= 0) {
        if (d.exact.terminal[node]! >= 0) return true
        if (k >= n || (buf.flags[k]! & F_BREAK) !== 0) break
        const nid = buf.id[k]!
        node = nid >= 0 ? d.exact.child(node, nid) : -1
        k++
      }
      if (d.hasStem) {
        const sid = this.stemIdAt(norm, i)
        node = sid >= 0 ? d.stem.root[sid]! : -1
        k = i + 1
        while (node >= 0) {
          if (d.stem.terminal[node]! >= 0) return true
          if (k >= n || (buf.flags[k]! & F_BREAK) !== 0) break
          const ns = this.stemIdAt(norm, k)
          node = ns >= 0 ? d.stem.child(node, ns) : -1
          k++
        }
      }
    }
    return false
  }

  /**
   * Scans a text and marks each token that some label of the taxonomy covers (whatever the rules
   * decide), for candidate-term discovery. Returns the NFKC text and views on the matcher's reused
   * buffers, valid until its next call.
   */
  coverTokens(text: string): { text: string; tokens: TokenBuffer; covered: Uint8Array } {
    const norm = NON_ASCII.test(text) ? text.normalize('NFKC') : text
    const d = this.d
    const buf = this.buf
    scanText(norm, d.vocab, buf)
    const n = buf.count
    if (this.covered.length < n) this.covered = new Uint8Array(Math.max(n, this.covered.length * 2))
    const covered = this.covered
    covered.fill(0, 0, n)
    for (let i = 0; i < n; i++) {
      let best = 0
      const id = buf.id[i]!
      if (id >= 0) {
        let node = d.exact.root[id]!
        let k = i + 1
        while (node >= 0) {
          if (d.exact.terminal[node]! >= 0) best = k - i
          if (k >= n || (buf.flags[k]! & F_BREAK) !== 0) break
          const nid = buf.id[k]!
          node = nid >= 0 ? d.exact.child(node, nid) : -1
          k++
        }
      }
      if (d.hasStem) {
        const sid = this.stemIdAt(norm, i)
        let node = sid >= 0 ? d.stem.root[sid]! : -1
        let k = i + 1
        while (node >= 0) {
          if (d.stem.terminal[node]! >= 0) best = Math.max(best, k - i)
          if (k >= n || (buf.flags[k]! & F_BREAK) !== 0) break
          const ns = this.stemIdAt(norm, k)
          node = ns >= 0 ? d.stem.child(node, ns) : -1
          k++
        }
      }
      if (best > 0) covered.fill(1, i, i + best)
    }
    return { text: norm, tokens: buf, covered }
  }

  /**
   * Tokens of a text with a flag per token telling whether any label of the taxonomy covers it
   * (see coverTokens). Token texts are folded as the scanner folds them ('' for covered tokens).
   */
  labelCoverage(text: string): { text: string; tokens: { start: number; end: number; folded: string; flags: number; covered: boolean }[] } {
    const { text: norm, tokens: buf, covered } = this.coverTokens(text)
    const tokens = []
    for (let i = 0; i < buf.count; i++) {
      const start = buf.start[i]!
      const end = buf.end[i]!
      // covered tokens never start a phrase: skip building their text
      tokens.push({ start, end, folded: covered[i] === 1 ? '' : foldString(norm.slice(start, end)), flags: buf.flags[i]!, covered: covered[i] === 1 })
    }
    return { text: norm, tokens }
  }

  private matchField(f: FieldState, agg: Map<number, ConceptMention>, rejected: RejectedMatch[] | undefined): void {
    const norm = NON_ASCII.test(f.text) ? f.text.normalize('NFKC') : f.text
    const state: FieldState = { ...f, text: norm }
    this.scanAndMatch(norm, f.listMode, rejected, state)
    const m = this.matches
    const buf = this.buf
    const d = this.d
    for (let i = 0; i < m.count; i++) {
      const label = m.label[i]!
      const start = buf.start[m.from[i]!]!
      const end = buf.end[m.to[i]! - 1]!
      const ci = d.labelConcept[label]!
      if (m.state[i] !== 0) {
        rejected?.push({ conceptId: d.concepts[ci]!.id, label: d.labelDisplay[label]!, start, end, text: norm.slice(start, end), field: f.field, reason: m.state[i] === 4 ? 'case' : 'no evidence' })
        continue
      }
      let mention = agg.get(ci)
      if (!mention) {
        mention = this.mention(ci, start, f.field)
        agg.set(ci, mention)
      }
      mention.count++
      if (this.withSpans) mention.spans.push({ start, end, text: norm.slice(start, end), label: d.labelDisplay[label]!, field: f.field, via: m.viaStem[i] ? 'stem' : 'exact' })
    }
  }

  private mention(ci: number, firstOffset: number, via: 'text' | 'skills'): ConceptMention {
    const c = this.d.concepts[ci]!
    return { conceptId: c.id, prefLabel: c.prefLabel, type: c.type, rollup: false, count: 0, firstOffset, via, spans: [] }
  }

  /** Index of a concept in the taxonomy's concept list (for compact encodings), or -1. */
  conceptIndexOf(id: string): number {
    return this.d.conceptIndex.get(id) ?? -1
  }

  private finish(agg: Map<number, ConceptMention>, rejected: RejectedMatch[] | undefined, withRollups: boolean): DocumentMapping {
    const mentions = [...agg.values()].sort((a, b) => (a.firstOffset < 0 ? 1e15 : a.firstOffset) - (b.firstOffset < 0 ? 1e15 : b.firstOffset))
    const rollups = new Map<number, RollupMention>()
    if (withRollups) for (const [ci, mention] of agg) {
      for (const ai of this.d.ancestors[ci]!) {
        if (agg.has(ai)) continue
        let r = rollups.get(ai)
        if (!r) {
          const c = this.d.concepts[ai]!
          r = { conceptId: c.id, prefLabel: c.prefLabel, type: c.type, rollup: true, via: [] }
          rollups.set(ai, r)
        }
        r.via.push(mention.conceptId)
      }
    }
    const out: DocumentMapping = { mentions, rollups: [...rollups.values()] }
    if (rejected) out.rejected = rejected
    return out
  }

  /** Stem id of token k, or -1; unknown tokens are stemmed only when their first letters can lead to a stemmed label. */
  private stemIdAt(text: string, k: number): number {
    const d = this.d
    const id = this.buf.id[k]!
    if (id >= 0) return d.vocabStem[id]!
    const s = this.buf.start[k]!
    const e = this.buf.end[k]!
    if (e - s < 3) return -1
    const gate = ((FOLD[text.charCodeAt(s)]! * 31 + FOLD[text.charCodeAt(s + 1)]!) * 31 + FOLD[text.charCodeAt(s + 2)]!) & 0xffff
    if (d.stemGate[gate] === 0) return -1
    return d.stemVocab.get(porterStem(foldString(text.slice(s, e))))
  }

  private scanAndMatch(text: string, listMode: boolean, rejected: RejectedMatch[] | undefined, f: FieldState): void {
    const d = this.d
    const buf = this.buf
    scanText(text, d.vocab, buf)
    const m = this.matches
    m.count = 0
    const n = buf.count
    const ids = buf.id
    const flags = buf.flags
    const exact = d.exact
    const stem = d.stem
    const hasStem = d.hasStem
    const candLen = this.candLen
    const candLabel = this.candLabel
    const candStem = this.candStem
    let i = 0
    while (i < n) {
      let nc = 0
      const id = ids[i]!
      if (id >= 0) {
        let node = exact.root[id]!
        let k = i + 1
        while (node >= 0) {
          const t = exact.terminal[node]!
          if (t >= 0 && nc < MAX_CANDIDATES) { candLen[nc] = k - i; candLabel[nc] = t; candStem[nc] = 0; nc++ }
          if (k >= n || (flags[k]! & F_BREAK) !== 0) break
          const nid = ids[k]!
          node = nid >= 0 ? exact.child(node, nid) : -1
          k++
        }
      }
      if (hasStem) {
        const sid = this.stemIdAt(text, i)
        if (sid >= 0) {
          let node = stem.root[sid]!
          let k = i + 1
          const first = nc
          while (node >= 0) {
            const t = stem.terminal[node]!
            if (t >= 0 && nc < first + MAX_CANDIDATES) { candLen[nc] = k - i; candLabel[nc] = t; candStem[nc] = 1; nc++ }
            if (k >= n || (flags[k]! & F_BREAK) !== 0) break
            const ns = this.stemIdAt(text, k)
            node = ns >= 0 ? stem.child(node, ns) : -1
            k++
          }
        }
      }
      if (nc === 0) {
        i++
        continue
      }
      // longest first; exact before stem at equal length
      let chosen = -1
      let caseFallback = false
      let firstReason: RejectedMatch['reason'] | undefined
      let firstLabel = -1
      let firstLen = 0
      for (let pass = 0; pass < nc; pass++) {
        let best = -1
        for (let c = 0; c < nc; c++) {
          if (candLen[c]! < 0) continue
          if (best < 0 || candLen[c]! > candLen[best]! || (candLen[c] === candLen[best] && candStem[c]! < candStem[best]!)) best = c
        }
        if (best < 0) break
        if (!this.separatorsFit(i, candLen[best]!, candLabel[best]!)) {
          candLen[best] = -1
          continue
        }
        const reason = this.localCheck(text, i, candLen[best]!, candLabel[best]!, candStem[best] === 1, listMode)
        if (reason === undefined) {
          chosen = best
          break
        }
        // a label written in another case can still be the skill when a technical neighbour says so
        // ("rust programming", "dax measures"); it then needs near evidence whatever its rule says.
        // Not for labels of one or two letters ("it" is no "IT", "go" no "Go").
        if (reason === 'case' && d.labelPolicy[candLabel[best]!]!.near && d.labelLetters[candLabel[best]!]! >= 3) {
          chosen = best
          caseFallback = true
          break
        }
        if (firstReason === undefined) { firstReason = reason; firstLabel = candLabel[best]!; firstLen = candLen[best]! }
        // a veto on this span also rules out the same concept's inflected match of it
        const vetoedConcept = d.labelConcept[candLabel[best]!]!
        const vetoedLen = candLen[best]!
        for (let c = 0; c < nc; c++) {
          if (candLen[c] === vetoedLen && d.labelConcept[candLabel[c]!] === vetoedConcept) candLen[c] = -1
        }
      }
      if (chosen < 0) {
        if (rejected && firstLabel >= 0) this.reject(rejected, f, i, i + firstLen, firstLabel, firstReason!)
        i++
        continue
      }
      const len = candLen[chosen]!
      const label = candLabel[chosen]!
      const p = d.labelPolicy[label]
      let state = 0
      if (p && !listMode && (p.when === 1 || (p.when === 2 && (flags[i]! & F_SENTENCE) !== 0))) state = 1
      if (caseFallback) state = 3
      m.push(label, i, i + len, state, candStem[chosen] === 1)
      i += len
    }
    if (!listMode) this.settleEvidence()
  }

  private reject(rejected: RejectedMatch[], f: FieldState, from: number, to: number, label: number, reason: RejectedMatch['reason']): void {
    const start = this.buf.start[from]!
    const end = this.buf.end[to - 1]!
    const d = this.d
    rejected.push({ conceptId: d.concepts[d.labelConcept[label]!]!.id, label: d.labelDisplay[label]!, start, end, text: f.text.slice(start, end), field: f.field, reason })
  }

  /** A comma or list separator inside the matched text must also be in the label ("C#, .NET" is not "C#.NET"). */
  private separatorsFit(i: number, len: number, label: number): boolean {
    const flags = this.buf.flags
    const allowed = this.d.labelLists[label]!
    for (let k = 1; k < len; k++) {
      if ((flags[i + k]! & F_LIST) !== 0 && (k >= 31 || (allowed & (1 << k)) === 0)) return false
    }
    return true
  }

  /** Case, veto words and stem exclusions: the checks that need only the match and its neighbours. */
  private localCheck(text: string, i: number, len: number, label: number, viaStem: boolean, listMode: boolean): RejectedMatch['reason'] | undefined {
    const p: CompiledPolicy | null = this.d.labelPolicy[label]!
    if (!p) return undefined
    const buf = this.buf
    const j = i + len
    if (p.notPrev.size > 0 && i > 0 && (buf.flags[i]! & F_BREAK) === 0 && p.notPrev.has(buf.id[i - 1]!)) return 'not-prev'
    if (p.notNext.size > 0 && j < buf.count && (buf.flags[j]! & F_BREAK) === 0 && p.notNext.has(buf.id[j]!)) return 'not-next'
    if (viaStem) {
      if (p.stemExclude.size > 0) {
        for (let k = i; k < j; k++) if (p.stemExclude.has(foldString(text.slice(buf.start[k]!, buf.end[k]!)))) return 'stem-exclude'
      }
      return undefined
    }
    if (p.caseMode !== 0 && !listMode && !this.caseMatches(text, i, len, label, p.caseMode)) return 'case'
    return undefined
  }

  private caseMatches(text: string, i: number, len: number, label: number, mode: number): boolean {
    const buf = this.buf
    for (const variant of this.d.labelWritten[label]!) {
      if (variant.length !== len) continue
      let ok = true
      for (let k = 0; k < len && ok; k++) {
        const written = variant[k]!
        const s = buf.start[i + k]!
        const e = buf.end[i + k]!
        if (e - s !== written.length) { ok = false; break }
        const got = text.slice(s, e)
        ok = got === written || (mode === 2 && got === written.toUpperCase() && /\p{L}/u.test(written))
      }
      if (ok) return true
    }
    return false
  }

  /** True when no token in (from, to) starts a sentence. */
  private sameSentence(from: number, to: number): boolean {
    const flags = this.buf.flags
    for (let k = from + 1; k < to; k++) if ((flags[k]! & F_SENTENCE) !== 0) return false
    return true
  }

  /** Pending matches become confirmed with evidence (two passes, so that two pending skills in a list can vouch for each other only through a confirmed one). */
  private settleEvidence(): void {
    const m = this.matches
    const d = this.d
    const buf = this.buf
    for (let pass = 0; pass < 2; pass++) {
      for (let a = 0; a < m.count; a++) {
        if (m.state[a] !== 1 && m.state[a] !== 3) continue
        const nearOnly = m.state[a] === 3
        const p = d.labelPolicy[m.label[a]!]!
        const from = m.from[a]!
        const to = m.to[a]!
        let ok = false
        if (p.near) {
          // backwards to the start of the sentence, forwards to the next one, within the window
          if ((buf.flags[from]! & F_SENTENCE) === 0) {
            for (let k = from - 1; k >= 0 && k >= from - p.window; k--) {
              if (p.nearIds.has(buf.id[k]!)) { ok = true; break }
              if ((buf.flags[k]! & F_SENTENCE) !== 0) break
            }
          }
          for (let k = to; !ok && k < buf.count && k < to + p.window; k++) {
            if ((buf.flags[k]! & F_SENTENCE) !== 0) break
            if (p.nearIds.has(buf.id[k]!)) ok = true
          }
        }
        if (!ok && p.skills && !nearOnly) {
          // a line or clause that is just this skill (a list item), or another hard skill in the same sentence
          if ((buf.flags[from]! & F_SENTENCE) !== 0 && (to >= buf.count || (buf.flags[to]! & F_SENTENCE) !== 0)) ok = true
          const ci = d.labelConcept[m.label[a]!]!
          for (let b = 0; b < m.count && !ok; b++) {
            if (m.state[b] !== 0 || b === a) continue
            const cb = d.labelConcept[m.label[b]!]!
            if (cb === ci || d.conceptHard[cb] !== 1) continue
            const bFrom = m.from[b]!
            const bTo = m.to[b]!
            if (bTo <= from - p.window || bFrom >= to + p.window) continue
            if (this.sameSentence(Math.min(from, bFrom), Math.max(to, bTo))) ok = true
          }
        }
        if (ok) m.state[a] = 0
      }
    }
    for (let a = 0; a < m.count; a++) {
      if (m.state[a] === 1) m.state[a] = 2
      else if (m.state[a] === 3) m.state[a] = 4
    }
  }
}

/**
 * Flattens a schema.org `skills` value into entries to match and explicit concept codes.
 * Strings are split on commas, semicolons, pipes and newlines; DefinedTerm-like objects give
 * their `name` (and `alternateName`) as entries and their `termCode` as a code.
 */
export function skillEntries(value: unknown): { entries: string[]; codes: string[] } {
  const entries: string[] = []
  const codes: string[] = []
  const visit = (v: unknown, depth: number): void => {
    if (depth > 4 || v === null || v === undefined) return
    if (typeof v === 'string') {
      for (const part of v.split(/[,;|\n]/)) if (part.trim()) entries.push(part.trim())
    } else if (Array.isArray(v)) for (const x of v) visit(x, depth + 1)
    else if (typeof v === 'object') {
      const o = v as Record<string, unknown>
      visit(o['name'], depth + 1)
      visit(o['alternateName'], depth + 1)
      if (typeof o['termCode'] === 'string') codes.push(o['termCode'])
    }
  }
  visit(value, 0)
  return { entries, codes }
}

