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
  const evaluate = (point: number[]): number => {
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
  let converged = false
  while (evaluations < maxEvaluations) {
    order.sort((a, b) => values[a]! - values[b]!)
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
    const centroid = new Array<number>(dimension).fill(0)
    for (const index of order.slice(0, dimension)) for (let j = 0; j < dimension; j++) centroid[j]! += simplex[index]![j]! / dimension
    const along = (factor: number): number[] => centroid.map((c, j) => c + factor * (simplex[worst]![j]! - c))
    const reflected = along(-1)
    const reflectedValue = evaluate(reflected)
    if (reflectedValue < values[best]!) {
      const expanded = along(-2)
      const expandedValue = evaluate(expanded)
      if (expandedValue < reflectedValue) {
        simplex[worst] = expanded
        values[worst] = expandedValue
      } else {
        simplex[worst] = reflected
        values[worst] = reflectedValue
      }
      continue
    }
    if (reflectedValue < values[secondWorst]!) {
      simplex[worst] = reflected
      values[worst] = reflectedValue
      continue
    }
    // contraction: outside if the reflection improved on the worst, inside otherwise
    const outside = reflectedValue < values[worst]!
    const contracted = along(outside ? -0.5 : 0.5)
    const contractedValue = evaluate(contracted)
    if (contractedValue < (outside ? reflectedValue : values[worst]!)) {
      simplex[worst] = contracted
      values[worst] = contractedValue
      continue
    }
    // shrink towards the best vertex
    for (const index of order.slice(1)) {
      simplex[index] = simplex[index]!.map((value, j) => simplex[best]![j]! + 0.5 * (value - simplex[best]![j]!))
      values[index] = evaluate(simplex[index]!)
    }
  }
  let bestIndex = 0
  for (let i = 1; i <= dimension; i++) if (values[i]! < values[bestIndex]!) bestIndex = i
  return { point: simplex[bestIndex]!, value: values[bestIndex]!, evaluations, converged }
}
