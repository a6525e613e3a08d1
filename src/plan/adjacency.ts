/**
 * @module plan/adjacency
 * Skill adjacency from co-occurrence in postings: positive pointwise mutual information (PPMI) or the
 * cosine of co-occurrence vectors, each with a minimum support (postings mentioning both skills).
 *
 * Pointwise mutual information of skills a and b over N documents:
 *   PMI(a, b) = log2( P(a, b) / (P(a)·P(b)) ) = log2( n_ab·N / (n_a·n_b) )
 * with n_a the documents mentioning a and n_ab those mentioning both. PPMI = max(0, PMI): a pair seen
 * together no more often than chance has no adjacency. PMI overrates rare pairs, hence the minimum
 * support n_ab ≥ minSupport.
 * Reference: https://en.wikipedia.org/wiki/Pointwise_mutual_information ; Church & Hanks (1990),
 * "Word association norms, mutual information, and lexicography", https://aclanthology.org/J90-1003/
 *
 * Cosine of co-occurrence vectors: v_a[c] = n_ac for every skill c ≠ a;
 *   cos(a, b) = Σ_c v_a[c]·v_b[c] / (|v_a|·|v_b|)
 * Reference: https://en.wikipedia.org/wiki/Cosine_similarity
 *
 * Cost: counting is O(Σ_d k_d²) for documents with k_d skills; one PMI is O(1); one cosine is
 * O(min(deg a, deg b)) over the neighbour lists. With a focus set F (the skills whose adjacency is
 * asked for), only pairs with a member in F are counted: O(Σ_d k_d + Σ_d f_d·k_d) for f_d focus
 * skills in document d, and the pair table holds F's rows only. Support, PMI and cosine are then
 * answered for pairs within F only (a RangeError otherwise, never a silently wrong number); for
 * PMI the documents may even list their F skills alone (the plan reads them so), the cosine needs
 * the whole lists (its vectors run over every skill).
 *
 * @example
 * ```ts
 * const co = countCoOccurrence([['a', 'b'], ['a', 'b'], ['a'], ['c']])
 * pmi(co, 'a', 'b') // => log2(2·4/(3·2)) = 0.415
 * ```
 */

export interface CoOccurrence {
  /** documents counted (including those with no skill) */
  documents: number
  /** documents mentioning each skill */
  counts: Map<string, number>
  /** skill -> dense index used in pair keys */
  index: Map<string, number>
  /** documents mentioning both skills, keyed by lowIndex·2^21 + highIndex */
  pairCounts: Map<number, number>
  /** neighbour lists, built on first use (cosine) */
  neighbours?: Map<number, Map<number, number>>
  /** when set, only pairs with a member here were counted */
  focus?: ReadonlySet<string>
}

/** Pair keys stay exact doubles for up to 2^21 (about two million) distinct skills. */
const PAIR_SHIFT = 2 ** 21

function pairKey(i: number, j: number): number {
  return i < j ? i * PAIR_SHIFT + j : j * PAIR_SHIFT + i
}

/**
 * Counts single and pair document frequencies; a skill repeated in one document counts once. With
 * `focus`, pairs are counted only when one of the two skills is in it (single counts always).
 */
export function countCoOccurrence(documents: Iterable<readonly string[]>, focus?: ReadonlySet<string>): CoOccurrence {
  const counts = new Map<string, number>()
  const index = new Map<string, number>()
  const pairCounts = new Map<number, number>()
  /** by dense index: is the skill in the focus set (all true without one) */
  const inFocus: boolean[] = []
  let n = 0
  const ids: number[] = []
  for (const doc of documents) {
    n++
    ids.length = 0
    let focused = 0
    for (const s of doc) {
      let i = index.get(s)
      if (i === undefined) {
        i = index.size
        if (i >= PAIR_SHIFT) throw new RangeError(`countCoOccurrence supports at most ${PAIR_SHIFT} distinct skills`)
        index.set(s, i)
        inFocus[i] = focus === undefined || focus.has(s)
      }
      if (!ids.includes(i)) {
        ids.push(i)
        counts.set(s, (counts.get(s) ?? 0) + 1)
        if (inFocus[i]) focused++
      }
    }
    if (focused === 0) continue
    for (let x = 0; x < ids.length; x++) {
      const fx = inFocus[ids[x]!]
      for (let y = x + 1; y < ids.length; y++) {
        if (!fx && !inFocus[ids[y]!]) continue
        const key = pairKey(ids[x]!, ids[y]!)
        pairCounts.set(key, (pairCounts.get(key) ?? 0) + 1)
      }
    }
  }
  return focus === undefined ? { documents: n, counts, index, pairCounts } : { documents: n, counts, index, pairCounts, focus }
}

/** A RangeError for a pair outside the focus set (its counts may be missing or partial). */
function checkFocus(co: CoOccurrence, a: string, b: string): void {
  if (co.focus && !(co.focus.has(a) && co.focus.has(b))) throw new RangeError(`co-occurrence of ${a} and ${b} was not counted: both must be in the focus set`)
}

/** Documents mentioning both skills. */
export function support(co: CoOccurrence, a: string, b: string): number {
  checkFocus(co, a, b)
  const i = co.index.get(a)
  const j = co.index.get(b)
  if (i === undefined || j === undefined || i === j) return 0
  return co.pairCounts.get(pairKey(i, j)) ?? 0
}

function neighbours(co: CoOccurrence): Map<number, Map<number, number>> {
  if (!co.neighbours) {
    const lists = new Map<number, Map<number, number>>()
    const add = (i: number, j: number, v: number) => {
      let row = lists.get(i)
      if (!row) lists.set(i, (row = new Map()))
      row.set(j, v)
    }
    for (const [key, v] of co.pairCounts) {
      const i = Math.floor(key / PAIR_SHIFT)
      const j = key - i * PAIR_SHIFT
      add(i, j, v)
      add(j, i, v)
    }
    co.neighbours = lists
  }
  return co.neighbours
}

/** Pointwise mutual information in bits; null when a pair or a skill is never seen. */
export function pmi(co: CoOccurrence, a: string, b: string): number | null {
  const nab = support(co, a, b)
  const na = co.counts.get(a) ?? 0
  const nb = co.counts.get(b) ?? 0
  if (nab === 0 || na === 0 || nb === 0) return null
  return Math.log2((nab * co.documents) / (na * nb))
}

/** Positive PMI with a minimum support: 0 below the support or for negative association. */
export function ppmi(co: CoOccurrence, a: string, b: string, minSupport: number): number {
  if (a === b || support(co, a, b) < minSupport) return 0
  const value = pmi(co, a, b)
  return value === null ? 0 : Math.max(0, value)
}

/** Cosine of the co-occurrence vectors of a and b, 0 below the minimum support. */
export function cosine(co: CoOccurrence, a: string, b: string, minSupport: number): number {
  checkFocus(co, a, b)
  if (a === b || support(co, a, b) < minSupport) return 0
  const lists = neighbours(co)
  const va = lists.get(co.index.get(a)!)
  const vb = lists.get(co.index.get(b)!)
  if (!va || !vb) return 0
  const [small, large] = va.size <= vb.size ? [va, vb] : [vb, va]
  let dot = 0
  for (const [c, x] of small) {
    const y = large.get(c)
    if (y !== undefined) dot += x * y
  }
  let na = 0
  for (const x of va.values()) na += x * x
  let nb = 0
  for (const x of vb.values()) nb += x * x
  return na > 0 && nb > 0 ? dot / Math.sqrt(na * nb) : 0
}

export interface Neighbour {
  id: string
  score: number
  support: number
  pmi: number | null
}

/**
 * The skills among `candidates` most adjacent to `skill`, best first (ties by id), at most `topK`,
 * only those with a positive score.
 */
export function nearest(
  co: CoOccurrence,
  skill: string,
  candidates: Iterable<string>,
  opts: { method: 'ppmi' | 'cosine'; minSupport: number; topK: number },
): Neighbour[] {
  const out: Neighbour[] = []
  for (const c of candidates) {
    if (c === skill) continue
    const score = opts.method === 'ppmi' ? ppmi(co, skill, c, opts.minSupport) : cosine(co, skill, c, opts.minSupport)
    if (score > 0) out.push({ id: c, score, support: support(co, skill, c), pmi: pmi(co, skill, c) })
  }
  out.sort((x, y) => y.score - x.score || (x.id < y.id ? -1 : x.id > y.id ? 1 : 0))
  return out.slice(0, opts.topK)
}
