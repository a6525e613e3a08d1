import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { BandFilter } from '../../src/ingest/band-filter.ts'
import { linesOfBuffer, linesOfFile } from '../../src/ingest/lines.ts'
import { PendingBands } from '../../src/ingest/pending-bands.ts'
import { rng } from './corpus.ts'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-lines-'))
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

describe('reading lines with byte offsets', () => {
  const parts: Buffer[] = [Buffer.from([0xef, 0xbb, 0xbf])] // a UTF-8 byte order mark, skipped
  for (let i = 0; i < 2000; i++) parts.push(Buffer.from(`{"i":${i},"t":"${'é'.repeat(i % 53)}"}${i % 7 === 0 ? '\r' : ''}\n`))
  parts.push(Buffer.from([0x61, 0xc3, 0x28, 0x0a])) // invalid UTF-8 on its own line
  parts.push(Buffer.from('y'.repeat(3000) + '\n'))
  parts.push(Buffer.from('last line without a break'))
  const bytes = Buffer.concat(parts)
  const file = path.join(dir, 'l.jsonl')
  fs.writeFileSync(file, bytes)
  const whole = [...linesOfBuffer(bytes)]

  it('gives the same lines from a file read in any chunk size as from the whole buffer', () => {
    expect(whole).toHaveLength(2003)
    expect(whole[0]!.text).toBe('{"i":0,"t":""}')
    expect(whole[2000]).toMatchObject({ line: 2001, text: null, invalidAt: bytes.length - 3000 - 1 - 25 - 3 })
    expect(whole.at(-1)).toMatchObject({ text: 'last line without a break', terminated: false, end: bytes.length })
    for (const chunk of [5, 64, 1000, 1 << 20]) expect([...linesOfFile(file, 0, 1, chunk, 1 << 20)]).toEqual(whole)
  })

  it('resumes at a byte offset and reports an over-long line once', () => {
    const mid = whole[1234]!
    expect([...linesOfFile(file, mid.end, mid.line + 1, 100)]).toEqual(whole.slice(1235))
    const capped = [...linesOfFile(file, 0, 1, 64, 1000)]
    expect(capped.filter((l) => l.tooLong).map((l) => l.line)).toEqual([2002])
    expect(capped).toHaveLength(2003)
  })
})

describe('in-memory indexes of band keys', () => {
  it('the Bloom filter never denies a key it holds, and its false-positive rate is near (1-e^(-4/16))^4', () => {
    const rand = rng(1)
    const f = new BandFilter(100_000)
    const held: [number, number][] = []
    for (let i = 0; i < 100_000; i++) {
      const k: [number, number] = [i % 10, Math.floor(rand() * 2 ** 32)]
      held.push(k)
      f.addBand(k[0], k[1])
    }
    expect(held.every(([b, k]) => f.hasBand(b, k))).toBe(true)
    let fp = 0
    for (let i = 0; i < 100_000; i++) if (f.hasBand(i % 10, Math.floor(rand() * 2 ** 32))) fp++
    // 100,000 keys in a filter of at least 2^22 bits: about 42 bits per key, so far below the
    // 16-bits-per-key design rate of 0.24 %
    expect(fp / 100_000).toBeLessThan(0.0024)
    // text hashes live in the same bits but never answer for a band key with the same number
    f.addText('0123456789abcdef')
    expect(f.hasText('0123456789abcdef')).toBe(true)
  })

  it('the open-batch table finds every document of a key, also after growing', () => {
    const p = new PendingBands()
    const rand = rng(2)
    const truth = new Map<string, number[]>()
    for (let doc = 1; doc <= 3000; doc++) {
      for (let band = 0; band < 10; band++) {
        // a small key space, so that keys repeat across documents
        const key = Math.floor(rand() * 5000) >>> 0
        p.add(band, key, doc)
        const k = `${band}:${key}`
        truth.set(k, [...(truth.get(k) ?? []), doc])
      }
    }
    for (const [k, docs] of truth) {
      const [band, key] = k.split(':').map(Number) as [number, number]
      const found: number[] = []
      p.forEach(band, key, (d) => found.push(d))
      expect(found.sort((a, b) => a - b)).toEqual(docs)
    }
    const rows = p.sortedRows()
    expect(rows).toHaveLength(30_000)
    expect(rows.every((r, i) => i === 0 || rows[i - 1]![0] < r[0] || (rows[i - 1]![0] === r[0] && rows[i - 1]![1] <= r[1]))).toBe(true)
    p.clear()
    let any = false
    p.forEach(0, rows[0]![0] % 2 ** 32, () => (any = true))
    expect(any).toBe(false)
  })
})
