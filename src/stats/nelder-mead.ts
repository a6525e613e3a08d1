/**
 * @module stats/nelder-mead
 * Nelder–Mead downhill simplex minimisation: derivative-free, for the few smoothing parameters of
 * exponential smoothing.
 */

export interface NelderMeadOptions {
  /** initial step per coordinate (default 0.1 of |x| or 0.1) */
  step?: number | readonly number[]
  /** stop when the simplex's function values differ by less than this (default 1e-10, absolute + relative) */
  tolerance?: number
  /** and when every vertex lies within this distance of the best one, per coordinate (default 1e-6) */
  pointTolerance?: number
  /** stop after this many function evaluations (default 200 · dimension) */
  maxEvaluations?: number
}

export interface NelderMeadResult {
  point: number[]
  value: number
  evaluations: number
  converged: boolean
}

/**
 * Minimise f over ℝⁿ by the Nelder–Mead simplex method with the standard coefficients
 * (reflection 1, expansion 2, contraction 1/2, shrink 1/2).
 *
 * Reference: https://en.wikipedia.org/wiki/Nelder%E2%80%93Mead_method
 * Cost: O(evaluations · (n + cost of f)).
 *
 * @example
 * ```ts
 * nelderMead(([x, y]) => (x - 1) ** 2 + (y + 2) ** 2, [0, 0]).point // => ≈ [1, -2]
 * ```
 */
export function nelderMead(
  objective: (point: readonly number[]) => number,
  start: readonly number[],
  options: NelderMeadOptions = {},
): NelderMeadResult {
  const dimension = start.length
  if (dimension === 0) throw new RangeError('nelderMead requires at least one coordinate')
  const tolerance = options.tolerance ?? 1e-10
  const pointTolerance = options.pointTolerance ?? 1e-6
  const maxEvaluations = options.maxEvaluations ?? 200 * dimension
  let evaluations = 0
  const evaluate = (point: readonly number[]): number => {
    evaluations++
    const value = objective(point)
    return Number.isNaN(value) ? Infinity : value
  }
  const simplex: number[][] = [start.slice()]
  for (let i = 0; i < dimension; i++) {
    const vertex = start.slice()
    const step = options.step === undefined ? (vertex[i] !== 0 ? 0.1 * Math.abs(vertex[i]!) : 0.1) : typeof options.step === 'number' ? options.step : options.step[i]!
    vertex[i]! += step
    simplex.push(vertex)
  }
  const values = simplex.map(evaluate)
  const order = simplex.map((_, i) => i)
  // scratch points reused every iteration (the objective is cheap; allocation would dominate)
  const centroid = new Array<number>(dimension).fill(0)
  let reflected = new Array<number>(dimension).fill(0)
  let expanded = new Array<number>(dimension).fill(0)
  let contracted = new Array<number>(dimension).fill(0)
  const along = (target: number[], worst: number, factor: number): number[] => {
    const vertex = simplex[worst]!
    for (let j = 0; j < dimension; j++) target[j] = centroid[j]! + factor * (vertex[j]! - centroid[j]!)
    return target
  }
  // the replaced vertex's array becomes the next scratch point
  const replace = (worst: number, point: number[], value: number): number[] => {
    const old = simplex[worst]!
    simplex[worst] = point
    values[worst] = value
    return old
  }
  let converged = false
  while (evaluations < maxEvaluations) {
    // insertion sort of the few vertex indices by value (no allocation, unlike Array.prototype.sort)
    for (let i = 1; i < order.length; i++) {
      const index = order[i]!
      let j = i - 1
      while (j >= 0 && values[order[j]!]! > values[index]!) {
        order[j + 1] = order[j]!
        j--
      }
      order[j + 1] = index
    }
    const best = order[0]!
    const worst = order[dimension]!
    const secondWorst = order[dimension - 1]!
    // both criteria: equal values alone can straddle the minimum (a symmetric simplex around it)
    if (Math.abs(values[worst]! - values[best]!) <= tolerance * (1 + Math.abs(values[best]!))) {
      let spread = 0
      for (const vertex of simplex) for (let j = 0; j < dimension; j++) spread = Math.max(spread, Math.abs(vertex[j]! - simplex[best]![j]!))
      if (spread <= pointTolerance) {
        converged = true
        break
      }
    }
    for (let j = 0; j < dimension; j++) centroid[j] = 0
    for (let r = 0; r < dimension; r++) {
      const vertex = simplex[order[r]!]!
      for (let j = 0; j < dimension; j++) centroid[j]! += vertex[j]! / dimension
    }
    along(reflected, worst, -1)
    const reflectedValue = evaluate(reflected)
    if (reflectedValue < values[best]!) {
      along(expanded, worst, -2)
      const expandedValue = evaluate(expanded)
      if (expandedValue < reflectedValue) expanded = replace(worst, expanded, expandedValue)
      else reflected = replace(worst, reflected, reflectedValue)
      continue
    }
    if (reflectedValue < values[secondWorst]!) {
      reflected = replace(worst, reflected, reflectedValue)
      continue
    }
    // contraction: outside if the reflection improved on the worst, inside otherwise
    const outside = reflectedValue < values[worst]!
    along(contracted, worst, outside ? -0.5 : 0.5)
    const contractedValue = evaluate(contracted)
    if (contractedValue < (outside ? reflectedValue : values[worst]!)) {
      contracted = replace(worst, contracted, contractedValue)
      continue
    }
    // shrink towards the best vertex
    const bestVertex = simplex[best]!
    for (let r = 1; r <= dimension; r++) {
      const vertex = simplex[order[r]!]!
      for (let j = 0; j < dimension; j++) vertex[j] = bestVertex[j]! + 0.5 * (vertex[j]! - bestVertex[j]!)
      values[order[r]!] = evaluate(vertex)
    }
  }
  let bestIndex = 0
  for (let i = 1; i <= dimension; i++) if (values[i]! < values[bestIndex]!) bestIndex = i
  return { point: simplex[bestIndex]!.slice(), value: values[bestIndex]!, evaluations, converged }
}
