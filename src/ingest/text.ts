/**
 * @module ingest/text
 * Text handling for ingest: bytes to text (charset from the Content-Type or XML declaration, invalid
 * UTF-8 detected rather than silently replaced), HTML to plain text, and the hashes that identify a
 * text (content hash for external ids, normalised-text hash for exact duplicates).
 */
import crypto from 'node:crypto'
import { decodeHTML } from 'entities'
import { tokenHashes } from './minhash.ts'

export interface DecodedText {
  text: string
  /** byte offset of the first invalid UTF-8 sequence (the text then carries U+FFFD there) */
  invalidAt: number | null
  charset: string
}

/**
 * Decodes a body. UTF-8 unless a charset is declared (Content-Type, or the XML declaration's
 * encoding) that Node's TextDecoder knows; invalid UTF-8 is decoded with U+FFFD and reported.
 */
export function decodeBytes(bytes: Uint8Array, contentType?: string | null): DecodedText {
  let charset = /charset\s*=\s*"?([\w.:-]+)/i.exec(contentType ?? '')?.[1]?.toLowerCase()
  if (!charset) {
    const head = Buffer.from(bytes.subarray(0, 200)).toString('latin1')
    charset = /^\s*<\?xml[^>]*encoding\s*=\s*["']([\w.:-]+)["']/i.exec(head)?.[1]?.toLowerCase()
  }
  if (charset && charset !== 'utf-8' && charset !== 'utf8') {
    try {
      return { text: new TextDecoder(charset).decode(bytes), invalidAt: null, charset }
    } catch {
      // unknown label: fall through to UTF-8, which reports anything it cannot read
    }
  }
  const start = bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf ? 3 : 0
  const body = bytes.subarray(start)
  try {
    return { text: new TextDecoder('utf-8', { fatal: true }).decode(body), invalidAt: null, charset: 'utf-8' }
  } catch {
    return { text: new TextDecoder('utf-8').decode(body), invalidAt: start + firstInvalidUtf8(body), charset: 'utf-8' }
  }
}

/** Byte offset of the first invalid UTF-8 sequence (RFC 3629 section 4 syntax), or -1. */
export function firstInvalidUtf8(b: Uint8Array): number {
  let i = 0
  while (i < b.length) {
    const c = b[i]!
    let need: number
    let min: number
    if (c < 0x80) {
      i++
      continue
    } else if (c >= 0xc2 && c <= 0xdf) [need, min] = [1, 0x80]
    else if (c >= 0xe0 && c <= 0xef) [need, min] = [2, 0x800]
    else if (c >= 0xf0 && c <= 0xf4) [need, min] = [3, 0x10000]
    else return i
    let cp = c & (0x3f >> need)
    for (let j = 1; j <= need; j++) {
      const d = b[i + j]
      if (d === undefined || (d & 0xc0) !== 0x80) return i
      cp = (cp << 6) | (d & 0x3f)
    }
    if (cp < min || cp > 0x10ffff || (cp >= 0xd800 && cp <= 0xdfff)) return i
    i += need + 1
  }
  return -1
}

const BLOCK = 'p|div|br|li|ul|ol|h[1-6]|tr|td|th|table|section|article|blockquote|pre|dd|dt|dl|hr'
/** comments, script-like elements with their content, CDATA, block tags, other tags: one pass */
const MARKUP = new RegExp(
  `<!--[\\s\\S]*?(?:-->|$)|<(script|style|template|noscript)\\b[\\s\\S]*?(?:</\\1\\s*>|$)|<!\\[CDATA\\[([\\s\\S]*?)\\]\\]>|<(/?(?:${BLOCK}))\\b[^>]*>|</?[a-z][^>]*>`,
  'gi',
)

/**
 * HTML (or plain text that may hold entities) to plain text: scripts, styles and comments dropped,
 * block elements become line breaks, other tags removed, entities decoded, spaces collapsed.
 * @example htmlToText('<p>Python &amp; SQL</p><ul><li>Kubernetes</li></ul>') // => 'Python & SQL\nKubernetes'
 */
export function htmlToText(html: string): string {
  let text = html
  if (text.includes('<')) {
    // inline tags vanish without a space, as a browser renders them ("<b>SQL</b>," is "SQL,");
    // comments and scripts become a space; block elements a line break
    text = text.replace(MARKUP, (m, script: string | undefined, cdata: string | undefined, block: string | undefined) =>
      cdata !== undefined ? cdata : block !== undefined ? '\n' : script !== undefined || m.startsWith('<!') ? ' ' : '',
    )
  }
  if (text.includes('&')) text = decodeHTML(text)
  return cleanText(text)
}

// eslint-disable-next-line no-control-regex
const CONTROL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f\u200b\ufeff]/
// eslint-disable-next-line no-control-regex
const CONTROL_ALL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f\u200b\ufeff]/g
const HAS_RUN = /[\t\u00a0]| {2}|\n[ \n]| \n/
const LINE_BREAK_RUN = /[ \t\u00a0]*\n[ \t\u00a0\n]*/g
const BLANK_RUN = /[ \t\u00a0]{2,}|[\t\u00a0]/g

const TIDY = 0
const RUNS = 1
const OTHER = 2

/**
 * One pass over the text instead of three regular expressions: TIDY (nothing to clean but the
 * ends), RUNS (only what HAS_RUN finds: tabs, no-break spaces, double spaces, blank runs around
 * line breaks) or OTHER (a control character or carriage return: the full path).
 */
function tidiness(t: string): number {
  let runs = false
  const n = t.length
  for (let i = 0; i < n; i++) {
    const c = t.charCodeAt(i)
    if (c < 32) {
      if (c === 10) {
        const next = t.charCodeAt(i + 1)
        if (next === 32 || next === 10) runs = true
      } else if (c === 9) runs = true
      else return OTHER
    } else if (c === 32) {
      const next = t.charCodeAt(i + 1)
      if (next === 32 || next === 10) runs = true
    } else if (c >= 127) {
      if (c === 127 || c === 0x200b || c === 0xfeff) return OTHER
      if (c === 0xa0) runs = true
    }
  }
  return runs ? RUNS : TIDY
}

/**
 * Removes control characters (keeping line breaks), collapses runs of spaces and blank lines, trims.
 * @example cleanText(' a \t b\n\n\n c\u0007 ') // => 'a b\nc'
 */
export function cleanText(text: string): string {
  const state = tidiness(text)
  if (state === TIDY) return text.trim()
  if (state === RUNS) return text.replace(LINE_BREAK_RUN, '\n').replace(BLANK_RUN, ' ').trim()
  let t = text
  if (CONTROL.test(t)) t = t.replace(CONTROL_ALL, '')
  if (t.includes('\r')) t = t.replace(/\r\n?/g, '\n')
  // string replacements (no callback per match), and none at all for already tidy text
  if (HAS_RUN.test(t)) t = t.replace(LINE_BREAK_RUN, '\n').replace(BLANK_RUN, ' ')
  return t.trim()
}

/** sha1 hex of a string: content-derived external ids (stable across runs and machines). */
export function contentId(...parts: readonly (string | null | undefined)[]): string {
  const h = crypto.createHash('sha1')
  for (const p of parts) h.update(`${(p ?? '').length}:${p ?? ''}|`)
  return h.digest('hex')
}

/**
 * Hash of the normalised text (words only, lower-cased, in order): two documents with the same
 * words in the same order are exact duplicates whatever their spacing, punctuation or markup.
 * Returns the token hashes too, because the near-duplicate step shingles the same tokens.
 */
export function normalisedTextHash(text: string): { hash: string; tokens: Uint32Array } {
  const tokens = tokenHashes(text)
  const hash = crypto.createHash('sha1').update(new Uint8Array(tokens.buffer, tokens.byteOffset, tokens.byteLength)).digest('hex')
  return { hash, tokens }
}
