import { describe, expect, it } from 'vitest'
import { cleanText } from '../../src/ingest/text.ts'
import { rng } from './corpus.ts'

// the three-expression version cleanText replaced (kept here as the reference it must equal)
// eslint-disable-next-line no-control-regex
const CONTROL_ALL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f\u200b\ufeff]/g
const HAS_RUN = /[\t\u00a0]| {2}|\n[ \n]| \n/
function reference(text: string): string {
  let t = text.replace(CONTROL_ALL, '')
  t = t.replace(/\r\n?/g, '\n')
  if (HAS_RUN.test(t)) t = t.replace(/[ \t\u00a0]*\n[ \t\u00a0\n]*/g, '\n').replace(/[ \t\u00a0]{2,}|[\t\u00a0]/g, ' ')
  return t.trim()
}

describe('cleanText', () => {
  it('equals the regular-expression reference on random strings of spaces, breaks and control characters', () => {
    const alphabet = ['a', 'b', ' ', ' ', '\n', '\t', '\r', '\u00a0', '\u0007', '\u200b', '\ufeff', '\u007f', 'é', '\u2003', '\u000b']
    const rand = rng(5)
    for (let k = 0; k < 50_000; k++) {
      const len = Math.floor(rand() * 12)
      let t = ''
      for (let i = 0; i < len; i++) t += alphabet[Math.floor(rand() * (rand() < 0.5 ? 5 : alphabet.length))]
      expect(cleanText(t), JSON.stringify(t)).toBe(reference(t))
    }
  })

  it('keeps tidy text as it is, trimmed', () => {
    expect(cleanText('  Python and SQL\nKubernetes ')).toBe('Python and SQL\nKubernetes')
    expect(cleanText(' a \t b\n\n\n c\u0007 ')).toBe('a b\nc')
  })
})
