/**
 * @module ability/response-data
 * A compact person-by-item store of dichotomous responses (compressed sparse rows), so that people
 * may answer different subsets of items (adaptive tests) without a dense matrix of gaps.
 * Person p's responses are entries start[p] … start[p+1]−1 of `item` and `response`.
 */

/** Sparse dichotomous responses, grouped by person. */
export interface ResponseMatrix {
  nPersons: number
  nItems: number
  /** length nPersons + 1 */
  start: Int32Array
  /** item index of each entry, 0 ≤ item < nItems */
  item: Int32Array
  /** 0 or 1 */
  response: Uint8Array
}

/**
 * Build a matrix from dense rows; null or undefined marks an item the person did not answer.
 *
 * @throws RangeError naming row and column of a value other than 0, 1 or null, or of a ragged row
 * @example fromDense([[1, 0, null], [0, 1, 1]]).item // => Int32Array [0, 1, 0, 1, 2]
 */
export function fromDense(rows: ReadonlyArray<ReadonlyArray<number | null | undefined>>): ResponseMatrix {
  const nPersons = rows.length
  const nItems = nPersons > 0 ? rows[0].length : 0
  let count = 0
  rows.forEach((row, p) => {
    if (row.length !== nItems) throw new RangeError(`response row ${p}: expected ${nItems} columns, got ${row.length}`)
    for (const value of row) if (value !== null && value !== undefined) count++
  })
  const start = new Int32Array(nPersons + 1)
  const item = new Int32Array(count)
  const response = new Uint8Array(count)
  let at = 0
  rows.forEach((row, p) => {
    start[p] = at
    row.forEach((value, j) => {
      if (value === null || value === undefined) return
      if (value !== 0 && value !== 1) throw new RangeError(`response row ${p}, item ${j}: must be 0 or 1 (got ${String(value)})`)
      item[at] = j
      response[at] = value
      at++
    })
  })
  start[nPersons] = at
  return { nPersons, nItems, start, item, response }
}

/**
 * Build a matrix from (person, item, response) index triples in any order. A person answering the
 * same item twice is an error: callers decide which attempt counts before building.
 *
 * @throws RangeError naming the entry for an index out of range, a response other than 0/1, or a duplicate
 */
export function fromTriples(
  nPersons: number,
  nItems: number,
  persons: ArrayLike<number>,
  items: ArrayLike<number>,
  responses: ArrayLike<number>,
): ResponseMatrix {
  const n = persons.length
  if (items.length !== n || responses.length !== n) throw new RangeError('fromTriples requires arrays of equal length')
  const counts = new Int32Array(nPersons + 1)
  for (let e = 0; e < n; e++) {
    const p = persons[e]
    const j = items[e]
    const u = responses[e]
    if (!Number.isInteger(p) || p < 0 || p >= nPersons) throw new RangeError(`response entry ${e}: person index ${p} out of range`)
    if (!Number.isInteger(j) || j < 0 || j >= nItems) throw new RangeError(`response entry ${e}: item index ${j} out of range`)
    if (u !== 0 && u !== 1) throw new RangeError(`response entry ${e}: response must be 0 or 1 (got ${u})`)
    counts[p + 1]++
  }
  const start = new Int32Array(nPersons + 1)
  for (let p = 0; p < nPersons; p++) start[p + 1] = start[p] + counts[p + 1]
  const fill = start.slice(0, nPersons)
  const item = new Int32Array(n)
  const response = new Uint8Array(n)
  for (let e = 0; e < n; e++) {
    const p = persons[e]
    const at = fill[p]
    fill[p] = at + 1
    item[at] = items[e]
    response[at] = responses[e]
  }
  const seen = new Int32Array(nItems).fill(-1)
  for (let p = 0; p < nPersons; p++) {
    for (let e = start[p]; e < start[p + 1]; e++) {
      const j = item[e]
      if (seen[j] === p) throw new RangeError(`person index ${p} answered item index ${j} more than once`)
      seen[j] = p
    }
  }
  return { nPersons, nItems, start, item, response }
}

/** Number of responses of person p. */
export function responseCount(matrix: ResponseMatrix, p: number): number {
  return matrix.start[p + 1] - matrix.start[p]
}
