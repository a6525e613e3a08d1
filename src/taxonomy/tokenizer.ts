/**
 * @module taxonomy/tokenizer
 * The tokeniser shared by labels and text. Tokens are runs of letters, digits and marks; `+` and
 * `#` stay at the end of a word (C++, C#), `.`, `/` and `&` stay between word characters and a
 * `.` before a word stays in front (Node.js, CI/CD, R&D, .NET). In text, such a compound is kept
 * whole when it is in the vocabulary (a label token) and otherwise split at its joiners, so
 * "Python/Java" gives two tokens but "CI/CD" one. Hyphens and apostrophes separate tokens, so
 * "retrieval-augmented" and "retrieval augmented" tokenise alike.
 *
 * `scanText` is the hot loop: it hashes folded code units while it scans and looks tokens up in an
 * open-addressing table over integer ids, allocating nothing per token.
 */
import { CLASS, F_BREAK, F_LIST, F_SENTENCE, FOLD, HASH_SEED, JOINER, SEPARATOR_FLAGS, SUFFIX, WORD, foldString, hashStep, hashString } from './chars.ts'

/** A Vocabulary's strings and hash table (taxonomy/matcher-cache.ts stores them). */
export interface VocabularyParts {
  strings: string[]
  slots: Int32Array
  slotHash: Int32Array
}

/** A growable map from folded token text to a dense integer id. */
export class Vocabulary {
  readonly strings: string[] = []
  private slots: Int32Array
  private slotHash: Int32Array
  private mask: number

  constructor(capacity = 1024) {
    let size = 16
    while (size < capacity * 2) size *= 2
    this.slots = new Int32Array(size).fill(-1)
    this.slotHash = new Int32Array(size)
    this.mask = size - 1
  }

  get size(): number {
    return this.strings.length
  }

  /** Its strings and hash table, for the matcher cache (taxonomy/matcher-cache.ts). */
  parts(): VocabularyParts {
    return { strings: this.strings, slots: this.slots, slotHash: this.slotHash }
  }

  /** The vocabulary {@link parts} describe (the arrays are taken over, not copied). */
  static fromParts(parts: VocabularyParts): Vocabulary {
    const v = new Vocabulary(1)
    for (const string of parts.strings) v.strings.push(string)
    v.slots = parts.slots
    v.slotHash = parts.slotHash
    v.mask = parts.slots.length - 1
    return v
  }

  /** Id of a folded token, adding it when new. */
  add(folded: string): number {
    const h = hashString(folded)
    const found = this.findString(folded, h)
    if (found >= 0) return found
    if ((this.strings.length + 1) * 2 > this.slots.length) this.grow()
    const id = this.strings.length
    this.strings.push(folded)
    this.insert(id, h)
    return id
  }

  /** Id of a token given as folded text, or -1. */
  get(folded: string): number {
    return this.findString(folded, hashString(folded))
  }

  /**
   * Id of `text[start, end)` compared after folding, given its folded hash, or -1.
   * This is the scanner's lookup: no string is built.
   */
  find(text: string, start: number, end: number, hash: number): number {
    const len = end - start
    let slot = hash & this.mask
    for (;;) {
      const id = this.slots[slot]!
      if (id < 0) return -1
      if (this.slotHash[slot] === hash) {
        const s = this.strings[id]!
        if (s.length === len) {
          let k = 0
          while (k < len && FOLD[text.charCodeAt(start + k)] === s.charCodeAt(k)) k++
          if (k === len) return id
        }
      }
      slot = (slot + 1) & this.mask
    }
  }

  private findString(folded: string, hash: number): number {
    return this.find(folded, 0, folded.length, hash)
  }

  private insert(id: number, hash: number): void {
    let slot = hash & this.mask
    while (this.slots[slot]! >= 0) slot = (slot + 1) & this.mask
    this.slots[slot] = id
    this.slotHash[slot] = hash
  }

  private grow(): void {
    const size = this.slots.length * 2
    this.slots = new Int32Array(size).fill(-1)
    this.slotHash = new Int32Array(size)
    this.mask = size - 1
    for (let id = 0; id < this.strings.length; id++) this.insert(id, hashString(this.strings[id]!))
  }
}

/** Token arrays reused from document to document. */
export class TokenBuffer {
  count = 0
  id: Int32Array
  start: Int32Array
  end: Int32Array
  flags: Uint8Array
  /** the folded hash of each token's text (hashString of its folded form), for lookups in other vocabularies */
  hash: Int32Array

  constructor(capacity = 4096) {
    this.id = new Int32Array(capacity)
    this.start = new Int32Array(capacity)
    this.end = new Int32Array(capacity)
    this.flags = new Uint8Array(capacity)
    this.hash = new Int32Array(capacity)
  }

  push(id: number, start: number, end: number, flags: number, hash: number): void {
    if (this.count === this.id.length) this.grow()
    const i = this.count++
    this.id[i] = id
    this.start[i] = start
    this.end[i] = end
    this.flags[i] = flags
    this.hash[i] = hash
  }

  private grow(): void {
    const n = this.id.length * 2
    const id = new Int32Array(n); id.set(this.id); this.id = id
    const st = new Int32Array(n); st.set(this.start); this.start = st
    const en = new Int32Array(n); en.set(this.end); this.end = en
    const fl = new Uint8Array(n); fl.set(this.flags); this.flags = fl
    const h = new Int32Array(n); h.set(this.hash); this.hash = h
  }
}

const MAX_PARTS = 64
const partStart = new Int32Array(MAX_PARTS)
const partEnd = new Int32Array(MAX_PARTS)
const partHash = new Int32Array(MAX_PARTS)

/** True when a token may start at `i`: a word character, or a `.` glued to a following word (".NET"). */
function startsToken(text: string, i: number, n: number): boolean {
  const c = text.charCodeAt(i)
  const cls = CLASS[c]!
  if (cls === WORD) return true
  return c === 0x2e && i + 1 < n && CLASS[text.charCodeAt(i + 1)] === WORD && (i === 0 || CLASS[text.charCodeAt(i - 1)] !== WORD)
}

/**
 * Scans `text` into `out` (cleared first). Token ids come from `vocab` (-1 when unknown).
 * Flags on each token say what separated it from the previous one (F_BREAK, F_SENTENCE, F_LIST).
 * @example
 * const v = new Vocabulary(); v.add('ci/cd'); const b = new TokenBuffer()
 * scanText('Python/Java and CI/CD', v, b); b.count // => 4  (python, java, and, ci/cd)
 */
export function scanText(text: string, vocab: Vocabulary, out: TokenBuffer): void {
  out.count = 0
  const n = text.length
  let pending = F_BREAK | F_SENTENCE
  let i = 0
  let abbreviation = false
  while (i < n) {
    if (!startsToken(text, i, n)) {
      const c = text.charCodeAt(i)
      // a full stop right after an abbreviation such as "e.g." does not end the sentence
      if (!(c === 0x2e && abbreviation)) pending |= SEPARATOR_FLAGS[c]!
      abbreviation = false
      i++
      continue
    }
    const start = i
    let whole = HASH_SEED
    let part = HASH_SEED
    let parts = 0
    let pStart = i
    let hasJoinerDot = false
    // a leading '.' belongs to the first part
    if (text.charCodeAt(i) === 0x2e) {
      whole = hashStep(whole, 0x2e)
      part = whole
      i++
    }
    while (i < n) {
      const c = text.charCodeAt(i)
      const cls = CLASS[c]!
      if (cls === WORD) {
        const f = FOLD[c]!
        whole = hashStep(whole, f)
        part = hashStep(part, f)
        i++
      } else if (cls === SUFFIX) {
        // a run of + or #: a suffix of the word, or a joiner when a word follows ("Python+SQL")
        let j = i
        let h = whole
        let ph = part
        while (j < n && CLASS[text.charCodeAt(j)] === SUFFIX) {
          const f = text.charCodeAt(j)
          h = hashStep(h, f)
          ph = hashStep(ph, f)
          j++
        }
        if (j < n && CLASS[text.charCodeAt(j)] === WORD) {
          if (parts < MAX_PARTS - 1) {
            partStart[parts] = pStart; partEnd[parts] = i; partHash[parts] = part; parts++
          }
          whole = h
          part = HASH_SEED
          pStart = j
          i = j
        } else {
          whole = h
          part = ph
          i = j
          break
        }
      } else if (cls === JOINER && i + 1 < n && CLASS[text.charCodeAt(i + 1)] === WORD) {
        if (c === 0x2e) hasJoinerDot = true
        if (parts < MAX_PARTS - 1) {
          partStart[parts] = pStart; partEnd[parts] = i; partHash[parts] = part; parts++
        }
        whole = hashStep(whole, c)
        part = HASH_SEED
        i++
        pStart = i
      } else break
    }
    const end = i
    abbreviation = hasJoinerDot
    if (parts === 0) {
      out.push(vocab.find(text, start, end, whole), start, end, pending, whole)
    } else {
      const id = vocab.find(text, start, end, whole)
      if (id >= 0) out.push(id, start, end, pending, whole)
      else {
        partStart[parts] = pStart; partEnd[parts] = end; partHash[parts] = part
        for (let k = 0; k <= parts; k++) {
          const s = partStart[k]!
          const e = partEnd[k]!
          if (e > s) out.push(vocab.find(text, s, e, partHash[k]!), s, e, k === 0 ? pending : 0, partHash[k]!)
        }
      }
    }
    pending = 0
  }
}

/**
 * Tokenises a label the way the matcher stores it: compounds are always kept whole.
 * Returns the tokens as written and folded.
 * @example
 * labelTokens('CI/CD pipelines').folded // => ['ci/cd', 'pipelines']
 * labelTokens('retrieval-augmented generation').folded // => ['retrieval', 'augmented', 'generation']
 */
export function labelTokens(label: string): { written: string[]; folded: string[]; lists: number } {
  const text = label.normalize('NFKC')
  const written: string[] = []
  const n = text.length
  let lists = 0
  let sep = 0
  let i = 0
  while (i < n) {
    if (!startsToken(text, i, n)) {
      sep |= SEPARATOR_FLAGS[text.charCodeAt(i)]!
      i++
      continue
    }
    if ((sep & F_LIST) !== 0 && written.length > 0 && written.length < 31) lists |= 1 << written.length
    sep = 0
    const start = i
    if (text.charCodeAt(i) === 0x2e) i++
    while (i < n) {
      const cls = CLASS[text.charCodeAt(i)]!
      if (cls === WORD) i++
      else if (cls === SUFFIX) {
        while (i < n && CLASS[text.charCodeAt(i)] === SUFFIX) i++
        if (!(i < n && CLASS[text.charCodeAt(i)] === WORD)) break
      } else if (cls === JOINER && i + 1 < n && CLASS[text.charCodeAt(i + 1)] === WORD) i++
      else break
    }
    written.push(text.slice(start, i))
  }
  return { written, folded: written.map(foldString), lists }
}

/** The key two labels collide on: folded tokens joined by one space ('' when there are none). */
export function labelKey(label: string): string {
  return labelTokens(label).folded.join(' ')
}
