/**
 * @module ability/simulate
 * Seeded random numbers and simulated IRT responses, for tests, benchmarks and the demo data.
 * mulberry32 (Tommy Ettinger, public domain; https://gist.github.com/tommyettinger/46a874533244883189143505d203312c)
 * gives uniform draws; normals come from the Box–Muller transform. O(1) per draw.
 */
import { probability, type ItemParams, D_LOGISTIC } from './response-function.ts'
import type { ResponseMatrix } from './response-data.ts'

/** A uniform [0, 1) generator. */
export type Random = () => number

/**
 * mulberry32 pseudo-random generator from a 32-bit seed.
 *
 * @example const rng = mulberry32(1); rng() // same value on every run
 */
export function mulberry32(seed: number): Random {
  let state = seed >>> 0
  return () => {
    state = (state + 0x6d2b79f5) >>> 0
    let t = state
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

/** A standard normal draw by Box–Muller. */
export function normalDraw(rng: Random): number {
  let u = rng()
  while (u <= 0) u = rng()
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng())
}

/**
 * Simulate a complete person × item matrix of dichotomous responses under the given items.
 */
export function simulateResponses(thetas: ArrayLike<number>, items: readonly ItemParams[], rng: Random, D = D_LOGISTIC): ResponseMatrix {
  const nPersons = thetas.length
  const nItems = items.length
  const start = new Int32Array(nPersons + 1)
  const item = new Int32Array(nPersons * nItems)
  const response = new Uint8Array(nPersons * nItems)
  for (let p = 0; p < nPersons; p++) {
    start[p] = p * nItems
    for (let j = 0; j < nItems; j++) {
      item[p * nItems + j] = j
      response[p * nItems + j] = rng() < probability(thetas[p], items[j], D) ? 1 : 0
    }
  }
  start[nPersons] = nPersons * nItems
  return { nPersons, nItems, start, item, response }
}
