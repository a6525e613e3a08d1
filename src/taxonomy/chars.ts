/**
 * @module taxonomy/chars
 * Per-code-unit tables the tokeniser reads in its inner loop: a case-fold table and a class table,
 * each built once per process (65,536 entries) so that scanning never allocates or calls into
 * the regular-expression engine per character.
 */

/** code-unit classes */
export const SEP = 0
export const WORD = 1
/** `+` and `#`: kept at the end of a word (C++, C#, F#) */
export const SUFFIX = 2
/** `.`, `/`, `&`: kept between word characters (Node.js, CI/CD, R&D), and a leading `.` (.NET) */
export const JOINER = 3

/** separator flags carried to the next token */
export const F_BREAK = 1
export const F_SENTENCE = 2
export const F_LIST = 4

/** Lower-case code unit for each UTF-16 code unit (identity when lower-casing changes the length). */
export const FOLD: Uint16Array = new Uint16Array(65536)
/** Class of each UTF-16 code unit: SEP, WORD, SUFFIX or JOINER. */
export const CLASS: Uint8Array = new Uint8Array(65536)
/** Flags a separator character sets on the following token. */
export const SEPARATOR_FLAGS: Uint8Array = new Uint8Array(65536)

const wordChar = /[\p{L}\p{N}\p{M}_]/u
for (let c = 0; c < 65536; c++) {
  const ch = String.fromCharCode(c)
  const lower = ch.toLowerCase()
  FOLD[c] = lower.length === 1 ? lower.charCodeAt(0) : c
  if (c >= 0xd800 && c <= 0xdfff) CLASS[c] = WORD // astral letters: both halves count as word units
  else if (wordChar.test(ch)) CLASS[c] = WORD
}
CLASS[0x2b] = SUFFIX // +
CLASS[0x23] = SUFFIX // #
CLASS[0x2e] = JOINER // .
CLASS[0x2f] = JOINER // /
CLASS[0x26] = JOINER // &
for (const ch of '.!?\n\r\u2022\u00b7\u2023\u25aa\u25cf') SEPARATOR_FLAGS[ch.charCodeAt(0)] = F_BREAK | F_SENTENCE
for (const ch of ';:()[]{}\t|"\u201c\u201d') SEPARATOR_FLAGS[ch.charCodeAt(0)] = F_BREAK
SEPARATOR_FLAGS[0x3a] = F_BREAK | F_SENTENCE // ':' starts a new clause ("Skills: Go, Rust")
for (const ch of ',/&+') SEPARATOR_FLAGS[ch.charCodeAt(0)] = F_LIST

/** FNV-1a 32-bit offset basis and step, applied to folded code units. */
export const HASH_SEED = 0x811c9dc5 | 0
export function hashStep(h: number, c: number): number {
  return Math.imul(h ^ c, 0x01000193)
}

/** Folded hash of a whole string (same value the scanner computes in place). */
export function hashString(s: string): number {
  let h = HASH_SEED
  for (let i = 0; i < s.length; i++) h = hashStep(h, FOLD[s.charCodeAt(i)]!)
  return h
}

/** Folds a string with the table (a per-code-unit lower-casing, like the scanner's). */
export function foldString(s: string): string {
  let out = ''
  for (let i = 0; i < s.length; i++) out += String.fromCharCode(FOLD[s.charCodeAt(i)]!)
  return out
}
