/**
 * @module ingest/lines
 * Lines of a JSON Lines (or CSV) body with their byte offsets, from a buffer or streamed from a
 * file in chunks, so that a large file never has to fit in memory and a run can resume at the byte
 * after the last committed line. Each line is checked for invalid UTF-8 on its own, so one bad line
 * costs only that line.
 */
import fs from 'node:fs'
import { firstInvalidUtf8 } from './text.ts'

export interface Line {
  /** 1-based */
  line: number
  /** the line's text without its line break; null when it is not valid UTF-8 */
  text: string | null
  /** byte offset (in the whole file) of the first invalid UTF-8 byte, when text is null */
  invalidAt?: number
  /** byte offset just after this line's break (where a resumed read starts) */
  end: number
  /** false for a last line without a line break (it may still be being written) */
  terminated: boolean
}

function decode(buf: Buffer, start: number, end: number, base: number): { text: string | null; invalidAt?: number } {
  let stop = end
  if (stop > start && buf[stop - 1] === 0x0d) stop--
  const text = buf.toString('utf8', start, stop)
  // Buffer#toString replaces invalid sequences with U+FFFD; only then is the slower exact check needed
  if (text.includes('\ufffd')) {
    const bad = firstInvalidUtf8(buf.subarray(start, stop))
    if (bad !== -1) return { text: null, invalidAt: base + start + bad }
  }
  return { text }
}

/** Lines of a buffer that starts at file offset `base` and line number `firstLine`. */
export function* linesOfBuffer(buf: Buffer, base = 0, firstLine = 1): Generator<Line> {
  let line = firstLine
  let start = 0
  const bomSkip = base === 0 && buf[0] === 0xef && buf[1] === 0xbb && buf[2] === 0xbf ? 3 : 0
  start = bomSkip
  while (start < buf.length) {
    const nl = buf.indexOf(0x0a, start)
    const end = nl === -1 ? buf.length : nl
    yield { line, ...decode(buf, start, end, base), end: base + (nl === -1 ? end : nl + 1), terminated: nl !== -1 }
    line++
    start = end + 1
  }
}

/**
 * Lines of a file from byte `offset` (at a line start) and line number `firstLine`, read in chunks.
 * A line longer than `maxLine` bytes is yielded with text null and invalidAt -1 (too long).
 */
export function* linesOfFile(file: string, offset = 0, firstLine = 1, chunkSize = 4 << 20, maxLine = 16 << 20): Generator<Line & { tooLong?: boolean }> {
  const fd = fs.openSync(file, 'r')
  try {
    // one buffer, reused: the unfinished last line moves to its front and the next read follows it
    let buf = Buffer.alloc(chunkSize)
    let pos = offset // file offset of buf[0]
    let have = 0 // bytes of an unfinished line at the front of buf
    let line = firstLine
    let skipping = false
    for (;;) {
      if (buf.length - have < chunkSize) {
        const bigger = Buffer.alloc(have + chunkSize)
        buf.copy(bigger, 0, 0, have)
        buf = bigger
      }
      const n = fs.readSync(fd, buf, have, buf.length - have, pos + have)
      const eof = n === 0
      const end = have + n
      let start = pos === 0 && buf[0] === 0xef && buf[1] === 0xbb && buf[2] === 0xbf ? 3 : 0
      for (;;) {
        const nl = buf.indexOf(0x0a, start)
        if (nl === -1 || nl >= end) break
        if (skipping) skipping = false
        else yield { line, ...decode(buf, start, nl, pos), end: pos + nl + 1, terminated: true }
        line++
        start = nl + 1
      }
      const rest = end - start
      if (eof) {
        if (rest > 0 && !skipping) yield { line, ...decode(buf, start, end, pos), end: pos + end, terminated: false }
        return
      }
      pos += start
      if (rest > maxLine) {
        // a line without end in sight: report it once and skip to its line break
        if (!skipping) yield { line, text: null, invalidAt: -1, end: pos, terminated: true, tooLong: true }
        skipping = true
        pos += rest
        have = 0
        if (buf.length > 2 * chunkSize) buf = Buffer.alloc(chunkSize)
      } else {
        buf.copyWithin(0, start, end)
        have = rest
      }
    }
  } finally {
    fs.closeSync(fd)
  }
}
