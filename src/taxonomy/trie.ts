/**
 * @module taxonomy/trie
 * A token trie over integer token ids, built once per taxonomy and then frozen into flat typed
 * arrays: a direct table for the root's children (one slot per token id) and, for deeper nodes,
 * children in compressed-row form sorted by token id. A walk costs one array read per token at
 * the root and a short scan below it, whatever the number of labels.
 */

export class TrieBuilder {
  private readonly children: Map<number, number>[] = [new Map()]
  private readonly terminals: number[] = [-1]

  /** Inserts a token-id path ending at `value`; returns the value already there, if any, else -1. */
  insert(path: readonly number[], value: number): number {
    let node = 0
    for (const tok of path) {
      const map = this.children[node]!
      let next = map.get(tok)
      if (next === undefined) {
        next = this.children.length
        this.children.push(new Map())
        this.terminals.push(-1)
        map.set(tok, next)
      }
      node = next
    }
    const old = this.terminals[node]!
    if (old < 0) this.terminals[node] = value
    return old
  }

  /** Value stored at a path, or -1. */
  lookup(path: readonly number[]): number {
    let node = 0
    for (const tok of path) {
      const next = this.children[node]!.get(tok)
      if (next === undefined) return -1
      node = next
    }
    return this.terminals[node]!
  }

  /** Removes the value at a path (used when two concepts share a stemmed form). */
  clear(path: readonly number[]): void {
    let node = 0
    for (const tok of path) {
      const next = this.children[node]!.get(tok)
      if (next === undefined) return
      node = next
    }
    this.terminals[node] = -1
  }

  /** Freezes the trie; `tokenSpace` is the number of distinct token ids. */
  freeze(tokenSpace: number): FrozenTrie {
    const nodeCount = this.children.length
    const root = new Int32Array(Math.max(tokenSpace, 1)).fill(-1)
    for (const [tok, child] of this.children[0]!) root[tok] = child
    const childStart = new Int32Array(nodeCount + 1)
    let total = 0
    for (let n = 0; n < nodeCount; n++) {
      childStart[n] = total
      if (n > 0) total += this.children[n]!.size
    }
    childStart[nodeCount] = total
    const childTok = new Int32Array(total)
    const childNode = new Int32Array(total)
    for (let n = 1; n < nodeCount; n++) {
      const entries = [...this.children[n]!].sort((a, b) => a[0] - b[0])
      let at = childStart[n]!
      for (const [tok, child] of entries) {
        childTok[at] = tok
        childNode[at] = child
        at++
      }
    }
    return new FrozenTrie(root, childStart, childTok, childNode, Int32Array.from(this.terminals))
  }

  get nodeCount(): number {
    return this.children.length
  }
}

export class FrozenTrie {
  constructor(
    readonly root: Int32Array,
    readonly childStart: Int32Array,
    readonly childTok: Int32Array,
    readonly childNode: Int32Array,
    readonly terminal: Int32Array,
  ) {}

  /** Child of a non-root node for a token id, or -1. */
  child(node: number, tok: number): number {
    let lo = this.childStart[node]!
    let hi = this.childStart[node + 1]!
    if (hi - lo <= 8) {
      for (; lo < hi; lo++) if (this.childTok[lo] === tok) return this.childNode[lo]!
      return -1
    }
    hi--
    while (lo <= hi) {
      const mid = (lo + hi) >> 1
      const t = this.childTok[mid]!
      if (t === tok) return this.childNode[mid]!
      if (t < tok) lo = mid + 1
      else hi = mid - 1
    }
    return -1
  }
}
