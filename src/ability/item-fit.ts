/**
 * @module ability/item-fit
 * Rasch-family item fit: information-weighted (infit) and unweighted (outfit) mean squares of the
 * standardised residuals, with their Wilson–Hilferty standardised forms (ZSTD).
 *
 * outfit_j = (1/N) Σ_i (u_ij − P_ij)² / W_ij,   infit_j = Σ_i (u_ij − P_ij)² / Σ_i W_ij,   W = P(1 − P)
 *
 * Both have expectation 1 when the model fits; above 1 means noise (underfit), below 1 means
 * overly predictable responses (overfit). People whose measure is not finite are skipped. With
 * measures estimated from the same responses the mean squares lean slightly below 1 on short tests
 * (about 1 − 1/length for ML measures; more for shrunken EAP measures). The 0.5–1.5 band used for
 * the misfit flag is Linacre's "productive for measurement" range (common practice, no source).
 * Reference: B. D. Wright & G. N. Masters (1982), Rating Scale Analysis, ch. 5, MESA Press,
 * https://www.rasch.org/books.htm; https://www.rasch.org/rmt/rmt162f.htm. O(responses).
 */
import { probability, type ItemParams, D_LOGISTIC } from './response-function.ts'
import type { ResponseMatrix } from './response-data.ts'

/** Fit of one item. NaN where the item has no responses. */
export interface ItemFit {
  infit: number
  outfit: number
  infitZ: number
  outfitZ: number
  n: number
  /** true when infit or outfit lies outside [0.5, 1.5] */
  misfit: boolean
}

export const FIT_BAND: Readonly<[number, number]> = Object.freeze([0.5, 1.5]) as Readonly<[number, number]>

/** Wilson–Hilferty cube-root transformation of a mean square with SD q to an approximate unit normal. */
function wilsonHilferty(meanSquare: number, q: number): number {
  if (!(q > 0) || !(meanSquare > 0)) return Number.NaN
  return (Math.cbrt(meanSquare) - 1) * (3 / q) + q / 3
}

/**
 * Infit and outfit for every item, given person measures θ (one per person of the matrix).
 *
 * @example itemFit(items, matrix, thetas)[0] // => { infit: 1.02, outfit: 0.97, ... }
 */
export function itemFit(items: readonly ItemParams[], matrix: ResponseMatrix, thetas: ArrayLike<number>, D = D_LOGISTIC): ItemFit[] {
  const J = items.length
  const sumZ2 = new Float64Array(J)
  const sumSq = new Float64Array(J)
  const sumW = new Float64Array(J)
  const sumC = new Float64Array(J)
  const sumCoverW2 = new Float64Array(J)
  const count = new Int32Array(J)
  for (let p = 0; p < matrix.nPersons; p++) {
    const theta = thetas[p]
    if (!Number.isFinite(theta)) continue
    for (let e = matrix.start[p]; e < matrix.start[p + 1]; e++) {
      const j = matrix.item[e]
      const P = probability(theta, items[j], D)
      const Q = 1 - P
      const W = Math.max(P * Q, 1e-12)
      const residual = matrix.response[e] - P
      // fourth central moment of a Bernoulli: PQ(P³ + Q³)
      const C = P * Q * (P * P * P + Q * Q * Q)
      sumZ2[j] += (residual * residual) / W
      sumSq[j] += residual * residual
      sumW[j] += W
      sumC[j] += C - W * W
      sumCoverW2[j] += C / (W * W)
      count[j]++
    }
  }
  const out: ItemFit[] = []
  for (let j = 0; j < J; j++) {
    const n = count[j]
    if (n === 0) {
      out.push({ infit: Number.NaN, outfit: Number.NaN, infitZ: Number.NaN, outfitZ: Number.NaN, n, misfit: false })
      continue
    }
    const outfit = sumZ2[j] / n
    const infit = sumSq[j] / sumW[j]
    const qOutfit = Math.sqrt(Math.max(sumCoverW2[j] / (n * n) - 1 / n, 0))
    const qInfit = Math.sqrt(Math.max(sumC[j], 0)) / sumW[j]
    const misfit = infit < FIT_BAND[0] || infit > FIT_BAND[1] || outfit < FIT_BAND[0] || outfit > FIT_BAND[1]
    out.push({ infit, outfit, infitZ: wilsonHilferty(infit, qInfit), outfitZ: wilsonHilferty(outfit, qOutfit), n, misfit })
  }
  return out
}
