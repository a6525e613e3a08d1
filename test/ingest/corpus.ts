/**
 * Test helpers for ingest: a seeded random source, posting-like texts, JobPosting lines with
 * planted reposts, and an exact Jaccard on word-shingle strings written independently of
 * src/ingest/minhash.ts (plain string sets, no hashing).
 */

/** mulberry32 (Tommy Ettinger, public domain). */
export function rng(seed: number): () => number {
  let s = seed >>> 0
  return () => {
    s = (s + 0x6d2b79f5) >>> 0
    let t = Math.imul(s ^ (s >>> 15), s | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

const VOCABULARY = (
  'we are looking for an engineer analyst designer manager technician lead with experience in python sql ' +
  'kubernetes terraform spreadsheets forklift bookkeeping payroll negotiation mentoring budgeting routing ' +
  'data pipelines cloud platforms stakeholder communication critical thinking agile delivery services ' +
  'security monitoring reporting customers suppliers training quality orchard depot bakery dairy courier ' +
  'the team builds runs improves owns supports our cooperative members across regions warehouses stores ' +
  'you will join a friendly group and help us plan test release document review automate migrate scale ' +
  'north south east west morning evening weekend rota shift contract permanent temporary salary pension ' +
  'annual leave bicycle scheme canteen flexible hours remote office hybrid induction certificate licence'
).split(' ')

/** A posting-like text of n words from a fixed vocabulary. */
export function randomText(rand: () => number, n: number): string {
  return Array.from({ length: n }, () => VOCABULARY[Math.floor(rand() * VOCABULARY.length)]!).join(' ')
}

/** The w-word shingles of a text as strings (words: letters and digits, lower-cased). */
export function shingles(text: string, w: number): Set<string> {
  const words = text.toLowerCase().split(/[^\p{L}\p{N}]+/u).filter(Boolean)
  const out = new Set<string>()
  if (words.length === 0) return out
  const width = Math.min(w, words.length)
  for (let i = 0; i + width <= words.length; i++) out.add(words.slice(i, i + width).join(' '))
  return out
}

/** Exact Jaccard similarity of the w-word shingle sets of two texts. */
export function stringJaccard(a: string, b: string, w: number): number {
  return setJaccard(shingles(a, w), shingles(b, w))
}

export function setJaccard(sa: Set<string>, sb: Set<string>): number {
  let inter = 0
  for (const s of sa) if (sb.has(s)) inter++
  const union = sa.size + sb.size - inter
  return union === 0 ? 1 : inter / union
}

export interface PostingLine {
  identifier: string
  title: string
  description: string
  datePosted: string
}

/**
 * n postings; about `repostShare` of them are reposts of a recent earlier one with a few words
 * changed (`edits` words of ~150), returned with the index of the posting they copy.
 */
export function postingsWithReposts(seed: number, n: number, repostShare = 0.1, edits: readonly number[] = [1, 2]): { lines: PostingLine[]; copies: Map<number, number> } {
  const rand = rng(seed)
  const lines: PostingLine[] = []
  const copies = new Map<number, number>()
  for (let i = 0; i < n; i++) {
    let text: string
    if (i > 10 && rand() < repostShare) {
      const orig = i - 1 - Math.floor(rand() * Math.min(i - 1, 200))
      const words = lines[orig]!.description.split(' ')
      const e = edits[Math.floor(rand() * edits.length)]!
      for (let k = 0; k < e; k++) words[Math.floor(rand() * words.length)] = `edit${Math.floor(rand() * 1e6)}`
      text = words.join(' ')
      copies.set(i, orig)
    } else text = randomText(rand, 140 + Math.floor(rand() * 40))
    const month = Math.floor((i / n) * 24)
    lines.push({ identifier: `p-${seed}-${i}`, title: 'Cooperative role', description: text, datePosted: `${2022 + Math.floor(month / 12)}-${String((month % 12) + 1).padStart(2, '0')}-15` })
  }
  return { lines, copies }
}

export function toJsonLines(lines: readonly object[]): string {
  return lines.map((l) => JSON.stringify({ '@type': 'JobPosting', ...l })).join('\n') + '\n'
}
