/**
 * @module taxonomy/trie
 * A token trie over integer token ids, built once per taxonomy and then frozen into flat typed
 * arrays: a direct table for the root's children (one slot per token id) and, for deeper nodes,
 * children in compressed-row form sorted by token id. A walk costs one array read per token at
 * the root and a short scan below it, whatever the number of labels.
 */

export class TrieBuilder {
  // the root's children in a map (its fan-out is the vocabulary); every other node's children in
  // a linked list of edges, which stays short and allocates no object per node
  private readonly rootChildren = new Map<number, number>()
  private readonly firstEdge: number[] = [-1]
  private readonly edgeTok: number[] = []
  private readonly edgeChild: number[] = []
  private readonly edgeNext: number[] = []
  private readonly terminals: number[] = [-1]

  private childOf(node: number, tok: number): number {
    if (node === 0) return this.rootChildren.get(tok) ?? -1
    for (let e = this.firstEdge[node]!; e >= 0; e = this.edgeNext[e]!) if (this.edgeTok[e] === tok) return this.edgeChild[e]!
    return -1
  }

  private addChild(node: number, tok: number): number {
    const child = this.terminals.length
    this.terminals.push(-1)
    this.firstEdge.push(-1)
    if (node === 0) this.rootChildren.set(tok, child)
    else {
      this.edgeTok.push(tok)
      this.edgeChild.push(child)
      this.edgeNext.push(this.firstEdge[node]!)
      this.firstEdge[node] = this.edgeTok.length - 1
    }
    return child
  }

  /** Inserts a token-id path ending at `value`; returns the value already there, if any, else -1. */
  insert(path: readonly number[], value: number): number {
    let node = 0
    for (const tok of path) {
      let next = this.childOf(node, tok)
      if (next < 0) next = this.addChild(node, tok)
      node = next
    }
    const old = this.terminals[node]!
    if (old < 0) this.terminals[node] = value
    return old
  }

  private nodeAt(path: readonly number[]): number {
    let node = 0
    for (const tok of path) {
      node = this.childOf(node, tok)
      if (node < 0) return -1
    }
    return node
  }

  /** Value stored at a path, or -1. */
  lookup(path: readonly number[]): number {
    const node = this.nodeAt(path)
    return node < 0 ? -1 : this.terminals[node]!
  }

  /** Removes the value at a path (used when two concepts share a stemmed form). */
  clear(path: readonly number[]): void {
    const node = this.nodeAt(path)
    if (node >= 0) this.terminals[node] = -1
  }

  /** Freezes the trie; `tokenSpace` is the number of distinct token ids. */
  freeze(tokenSpace: number): FrozenTrie {
    const nodeCount = this.terminals.length
    const root = new Int32Array(Math.max(tokenSpace, 1)).fill(-1)
    for (const [tok, child] of this.rootChildren) root[tok] = child
    const childStart = new Int32Array(nodeCount + 1)
    const counts = new Int32Array(nodeCount)
    for (let n = 1; n < nodeCount; n++) for (let e = this.firstEdge[n]!; e >= 0; e = this.edgeNext[e]!) counts[n]!++
    let total = 0
    for (let n = 0; n < nodeCount; n++) {
      childStart[n] = total
      total += counts[n]!
    }
    childStart[nodeCount] = total
    const childTok = new Int32Array(total)
    const childNode = new Int32Array(total)
    const pairs: [number, number][] = []
    for (let n = 1; n < nodeCount; n++) {
      pairs.length = 0
      for (let e = this.firstEdge[n]!; e >= 0; e = this.edgeNext[e]!) pairs.push([this.edgeTok[e]!, this.edgeChild[e]!])
      pairs.sort((a, b) => a[0] - b[0])
      let at = childStart[n]!
      for (const [tok, child] of pairs) {
        childTok[at] = tok
        childNode[at] = child
        at++
      }
    }
    return new FrozenTrie(root, childStart, childTok, childNode, Int32Array.from(this.terminals))
  }

  get nodeCount(): number {
    return this.terminals.length
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
