/**
 * @module taxonomy/phrase-counter
 * The counting pass of candidate-term discovery (candidates.ts) without a string per phrase: tokens
 * are interned as integer ids, each with its candidate properties worked out once, and a phrase of
 * two or three tokens is the id of the pair (id of its first tokens' phrase, id of its last token).
 * It counts the documents that contain each phrase, in the recent and in the earlier window, by
 * the rules of `documentPhrases` and with the same memory bound (beyond `maxPhrases` counted
 * phrases, those seen in only one document are dropped). `documentPhrases`, which builds the
 * strings, stays the reference it is tested against (test/taxonomy/phrase-counter.test.ts).
 *
 * Measured on the N = 100,000 benchmark database (48,000 documents in the 24-month window, one
 * core, another process busy on the second): the candidate refresh took 7.3 s of CPU with phrase
 * strings, 3.6 s with this counter (of which reading the texts about 1.2 s).
 */
import { F_BREAK, F_LIST, foldString } from './chars.ts'
import { type TokenBuffer, Vocabulary } from './tokenizer.ts'

/** Token property bits (see classify in the constructor). */
export const TOKEN_VALID = 1
export const TOKEN_STOP = 2
export const TOKEN_MIDDLE = 4

/** Phrase ids and token ids share one float64 key: prefix phrase id × 2^25 + token id < 2^53. */
const TOKEN_LIMIT = 2 ** 25
const PHRASE_LIMIT = 2 ** 28

export interface PhraseCount {
  term: string
  recent: number
  earlier: number
}

export class PhraseCounter {
  private readonly vocab = new Vocabulary(1 << 14)
  private tokenProps = new Uint8Array(1 << 14)
  /** the one-token phrase of each token id, or -1 */
  private tokenPhrase = new Int32Array(1 << 14).fill(-1)
  /** (prefix phrase id, token id) -> phrase id, for phrases of two and three tokens */
  private readonly extended = new Map<number, number>()
  // per phrase id
  private parent = new Int32Array(1 << 16)
  private lastToken = new Int32Array(1 << 16)
  private recentDf = new Int32Array(1 << 16)
  private earlierDf = new Int32Array(1 << 16)
  /** the last document that counted the phrase (documents count each phrase once) */
  private seenIn = new Int32Array(1 << 16)
  private nextPhrase = 0
  private readonly freed: number[] = []
  private docSerial = 0
  private ids = new Int32Array(4096)
  /** phrases with a recent / an earlier count above zero */
  recentPhrases = 0
  earlierPhrases = 0

  /**
   * @param classify the TOKEN_* bits of a folded token: VALID when it may be part of a phrase, STOP
   *   when it may not start or end one, MIDDLE when it may sit inside one although a stop word
   * @param maxPhrases counted phrases (recent and earlier) beyond which singletons are dropped
   */
  constructor(
    private readonly classify: (folded: string) => number,
    private readonly maxPhrases = 2_000_000,
  ) {}

  /** Counts the phrases of one document (its NFKC text, tokens and coverage from Matcher.coverTokens). */
  addDocument(text: string, tokens: TokenBuffer, covered: Uint8Array, recent: boolean): void {
    const doc = ++this.docSerial
    const n = tokens.count
    if (this.ids.length < n) this.ids = new Int32Array(Math.max(n, this.ids.length * 2))
    const ids = this.ids
    for (let i = 0; i < n; i++) ids[i] = covered[i] === 1 ? -1 : this.tokenId(text, tokens.start[i]!, tokens.end[i]!, tokens.hash[i]!)
    const props = this.tokenProps
    const flags = tokens.flags
    for (let i = 0; i < n; i++) {
      const first = ids[i]!
      // a phrase never starts with a stop word: nothing starting here counts
      if (first < 0 || (props[first]! & (TOKEN_VALID | TOKEN_STOP)) !== TOKEN_VALID) continue
      let phrase = -1
      for (let len = 1; len <= 3 && i + len <= n; len++) {
        const k = i + len - 1
        const t = ids[k]!
        if (t < 0 || (props[t]! & TOKEN_VALID) === 0) break
        if (len > 1 && (flags[k]! & (F_BREAK | F_LIST)) !== 0) break
        // a stop word may sit inside a phrase only as a connector ("infrastructure as code")
        if (len === 3 && (props[ids[i + 1]!]! & (TOKEN_STOP | TOKEN_MIDDLE)) === TOKEN_STOP) break
        phrase = len === 1 ? this.unigram(t) : this.extend(phrase, t)
        if ((props[t]! & TOKEN_STOP) !== 0) continue
        if (this.seenIn[phrase] === doc) continue
        this.seenIn[phrase] = doc
        if (recent) {
          if (this.recentDf[phrase]!++ === 0) this.recentPhrases++
        } else if (this.earlierDf[phrase]!++ === 0) this.earlierPhrases++
      }
    }
    if (this.recentPhrases + this.earlierPhrases > this.maxPhrases) this.dropSingletons()
  }

  /** Every phrase with a recent count, with its counts (in no particular order). */
  *recentCounts(minRecent = 1): Generator<PhraseCount> {
    for (let p = 0; p < this.nextPhrase; p++) {
      const recent = this.recentDf[p]!
      if (recent > 0 && recent >= minRecent) yield { term: this.text(p), recent, earlier: this.earlierDf[p]! }
    }
  }

  /** Distinct phrase ids held (counted or prefixes of counted ones); for tests and figures. */
  get phrasesHeld(): number {
    return this.nextPhrase - this.freed.length
  }

  private tokenId(text: string, start: number, end: number, hash: number): number {
    let id = this.vocab.find(text, start, end, hash)
    if (id >= 0) return id
    id = this.vocab.add(foldString(text.slice(start, end)))
    if (id >= TOKEN_LIMIT) throw new RangeError(`candidate terms: more than ${TOKEN_LIMIT} distinct tokens in the window`)
    if (id >= this.tokenProps.length) {
      const props = new Uint8Array(this.tokenProps.length * 2)
      props.set(this.tokenProps)
      this.tokenProps = props
      const phrase = new Int32Array(this.tokenPhrase.length * 2).fill(-1)
      phrase.set(this.tokenPhrase)
      this.tokenPhrase = phrase
    }
    this.tokenProps[id] = this.classify(this.vocab.strings[id]!)
    return id
  }

  private unigram(token: number): number {
    let p = this.tokenPhrase[token]!
    if (p < 0) {
      p = this.newPhrase(-1, token)
      this.tokenPhrase[token] = p
    }
    return p
  }

  private extend(prefix: number, token: number): number {
    const key = prefix * TOKEN_LIMIT + token
    let p = this.extended.get(key)
    if (p === undefined) {
      p = this.newPhrase(prefix, token)
      this.extended.set(key, p)
    }
    return p
  }

  private newPhrase(parent: number, token: number): number {
    let p = this.freed.pop()
    if (p === undefined) {
      p = this.nextPhrase++
      if (p >= PHRASE_LIMIT) throw new RangeError(`candidate terms: more than ${PHRASE_LIMIT} distinct phrases in the window`)
      if (p >= this.parent.length) this.growPhrases()
    }
    this.parent[p] = parent
    this.lastToken[p] = token
    this.recentDf[p] = 0
    this.earlierDf[p] = 0
    this.seenIn[p] = 0
    return p
  }

  private growPhrases(): void {
    const n = this.parent.length * 2
    const grow = (a: Int32Array) => {
      const b = new Int32Array(n)
      b.set(a)
      return b
    }
    this.parent = grow(this.parent)
    this.lastToken = grow(this.lastToken)
    this.recentDf = grow(this.recentDf)
    this.earlierDf = grow(this.earlierDf)
    this.seenIn = grow(this.seenIn)
  }

  /** Drops the phrases counted in only one document, and frees the ids no counted phrase needs. */
  private dropSingletons(): void {
    const n = this.nextPhrase
    for (let p = 0; p < n; p++) {
      if (this.recentDf[p] === 1) { this.recentDf[p] = 0; this.recentPhrases-- }
      if (this.earlierDf[p] === 1) { this.earlierDf[p] = 0; this.earlierPhrases-- }
    }
    // a counted phrase keeps its id and its prefixes' ids (its key refers to them)
    const keep = new Uint8Array(n)
    for (let p = 0; p < n; p++) {
      if (this.recentDf[p] === 0 && this.earlierDf[p] === 0) continue
      for (let q = p; q >= 0 && keep[q] === 0; q = this.parent[q]!) keep[q] = 1
    }
    for (const [key, p] of this.extended) {
      if (keep[p] === 0) {
        this.extended.delete(key)
        this.freed.push(p)
      }
    }
    for (let t = 0; t < this.vocab.size; t++) {
      const p = this.tokenPhrase[t]!
      if (p >= 0 && keep[p] === 0) {
        this.tokenPhrase[t] = -1
        this.freed.push(p)
      }
    }
  }

  private text(p: number): string {
    let s = this.vocab.strings[this.lastToken[p]!]!
    for (let q = this.parent[p]!; q >= 0; q = this.parent[q]!) s = `${this.vocab.strings[this.lastToken[q]!]!} ${s}`
    return s
  }
}
