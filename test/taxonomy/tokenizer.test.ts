import { describe, it, expect } from 'vitest'
import { labelKey, labelTokens, scanText, TokenBuffer, Vocabulary } from '../../src/taxonomy/tokenizer.ts'
import { F_BREAK, F_LIST, F_SENTENCE } from '../../src/taxonomy/chars.ts'

function tokens(text: string, vocabWords: string[] = []): string[] {
  const v = new Vocabulary()
  for (const w of vocabWords) v.add(w)
  const b = new TokenBuffer(4)
  scanText(text, v, b)
  const out: string[] = []
  for (let i = 0; i < b.count; i++) out.push(text.slice(b.start[i], b.end[i]))
  return out
}

describe('tokeniser', () => {
  it('keeps C++, C#, F#, .NET, Node.js, CI/CD, R&D and ASP.NET whole in labels', () => {
    for (const label of ['C++', 'C#', 'F#', '.NET', 'Node.js', 'CI/CD', 'R&D', 'ASP.NET', 'TCP/IP', 'Security+']) {
      expect(labelTokens(label).written).toEqual([label])
    }
    expect(labelTokens('C++17 and .NET 8').folded).toEqual(['c++17', 'and', '.net', '8'])
  })

  it('keeps vocabulary compounds whole in text and splits the others at their joiners', () => {
    const vocab = ['ci/cd', 'node.js', 'c++', 'c#', '.net', 'asp.net']
    expect(tokens('Node.js, C++ and C# on .NET; CI/CD via ASP.NET.', vocab)).toEqual(['Node.js', 'C++', 'and', 'C#', 'on', '.NET', 'CI/CD', 'via', 'ASP.NET'])
    expect(tokens('Python/Java and TLS/SSL', vocab)).toEqual(['Python', 'Java', 'and', 'TLS', 'SSL'])
    expect(tokens('Python+SQL', vocab)).toEqual(['Python', 'SQL'])
  })

  it('splits on hyphens and apostrophes so spelling variants share tokens', () => {
    expect(labelKey('retrieval-augmented generation')).toBe(labelKey('Retrieval augmented  generation'))
    expect(tokens("Porter's five forces")).toEqual(['Porter', 's', 'five', 'forces'])
  })

  it('case-folds without allocating a string per token (ids are found from the text)', () => {
    const v = new Vocabulary()
    const id = v.add('kubernetes')
    const b = new TokenBuffer()
    scanText('KUBERNETES kubernetes Kubernetes Kubernetess', v, b)
    expect(Array.from(b.id.subarray(0, b.count))).toEqual([id, id, id, -1])
  })

  it('marks breaks, sentence starts and list separators, but not after an abbreviation', () => {
    const v = new Vocabulary()
    const b = new TokenBuffer()
    const text = 'Go, Rust. Java; e.g. Scala\nPerl'
    scanText(text, v, b)
    const flagOf = (word: string): number => {
      for (let i = 0; i < b.count; i++) if (text.slice(b.start[i], b.end[i]) === word) return b.flags[i]!
      throw new Error(`no token ${word}`)
    }
    expect(flagOf('Go') & F_SENTENCE).toBeTruthy() // first token
    expect(flagOf('Rust') & F_LIST).toBeTruthy() // after the comma
    expect(flagOf('Rust') & F_BREAK).toBe(0)
    expect(flagOf('Java') & F_SENTENCE).toBeTruthy() // after a full stop
    expect(flagOf('e') & F_BREAK).toBeTruthy() // after the semicolon
    expect(flagOf('Scala') & F_SENTENCE).toBe(0) // "e.g." does not end the sentence
    expect(flagOf('Perl') & F_SENTENCE).toBeTruthy() // new line
  })

  it('normalises labels to NFKC so full-width and ligature forms collide', () => {
    expect(labelKey('Ｐｙｔｈｏｎ')).toBe('python')
    expect(labelKey('ﬁnance')).toBe('finance')
  })

  it('grows its buffers for long texts', () => {
    const text = 'word '.repeat(10_000)
    expect(tokens(text)).toHaveLength(10_000)
  })
})
