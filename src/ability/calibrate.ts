/**
 * @module ability/calibrate
 * Item calibration by marginal maximum likelihood with the EM algorithm (Bock & Aitkin 1981), for
 * the Rasch model and the 2PL, from dichotomous responses with no known item parameters.
 *
 * E-step: for each person, the posterior weight of every quadrature node given current items;
 *   summed into expected counts n_jk (people at node k who answered item j) and r_jk (of whom correct).
 * M-step: each item maximises Σ_k r_jk log P_jk + (n_jk − r_jk) log(1 − P_jk), a weighted logistic
 *   regression on the nodes, by Newton–Raphson in the slope–intercept form z = αx + β (concave).
 *
 * Identification: θ ~ N(0, 1) for the 2PL (a = α/D, b = −β/α). For the Rasch model a = 1 and the
 * latent SD σ is estimated (θ ~ N(0, σ²), α = Dσ common to all items, b = −β/D); with
 * `estimateSd: false` σ is fixed at 1. With anchor items (known parameters, `fixed`) the anchors
 * set the metric and the latent mean and SD are estimated instead, from the people's posterior
 * moments each cycle (an empirical update of the normal latent distribution). Convergence: the largest change of any reported parameter
 * (a, b, σ, μ) between cycles is below `tolerance`. The marginal log-likelihood never decreases
 * (checked in the tests). Standard errors come from the cross-product of per-person scores (XPD,
 * an estimate of the observed information) and the delta method.
 *
 * Items with no variance (all correct or all wrong) or too few responses are not calibrated, and
 * items that end outside plausible ranges or still moving when the cycle limit is hit are flagged;
 * all of them are reported, none is dropped silently.
 *
 * Reference: R. D. Bock & M. Aitkin (1981), Psychometrika 46, 443–459; F. B. Baker & S.-H. Kim
 * (2004), Item Response Theory: Parameter Estimation Techniques, ch. 6; the free
 * R package mirt documentation (https://cran.r-project.org/package=mirt) for the XPD estimator.
 * O(cycles × responses × points).
 */
import { D_LOGISTIC, type ItemParams } from './response-function.ts'
import { normalGrid, type QuadratureOptions } from './quadrature.ts'
import type { ResponseMatrix } from './response-data.ts'
import { invertSpd } from './linear-algebra.ts'
import { estimateAbilities } from './estimate.ts'
import { itemFit, type ItemFit } from './item-fit.ts'

export type CalibrationModel = 'rasch' | '2pl'

export type ItemCalibrationStatus =
  | 'converged'
  | 'fixed'
  | 'not-converged'
  | 'out-of-range'
  | 'all-correct'
  | 'all-wrong'
  | 'too-few-responses'

export interface CalibrationOptions {
  model?: CalibrationModel
  D?: number
  /** grid on the standard normal latent scale (default 61 points over ±6) */
  quadrature?: QuadratureOptions
  /** largest parameter change for convergence (default 1e-4) */
  tolerance?: number
  /** EM cycle limit (default 500) */
  maxCycles?: number
  /** Rasch only: estimate the latent SD (default true) */
  estimateSd?: boolean
  /** items with fewer responses are not calibrated (default 10) */
  minResponses?: number
  /** plausible range of a (default [0.05, 10]) and |b| (default 8); outside means 'out-of-range' */
  maxA?: number
  minA?: number
  maxAbsB?: number
  /** compute standard errors and fit (default true) */
  diagnostics?: boolean
  /**
   * Anchor items: parameters known (e.g. imported), one entry per item, null for items to estimate.
   * Anchors take part in the E-step with their parameters fixed and so set the metric; the latent
   * mean and SD are then estimated (the SD stays 1 for Rasch with `estimateSd: false`).
   */
  fixed?: ReadonlyArray<ItemParams | null>
}

export interface CalibratedItem {
  index: number
  status: ItemCalibrationStatus
  /** reported parameters; null for items that could not be calibrated */
  params: ItemParams | null
  /** standard errors (a's is null for Rasch); null when not available */
  se: { a: number | null; b: number } | null
  fit: ItemFit | null
  nResponses: number
  proportionCorrect: number
  note: string | null
}

export interface CalibrationResult {
  model: CalibrationModel
  D: number
  converged: boolean
  cycles: number
  /** marginal log-likelihood at the final parameters */
  logLikelihood: number
  /** log-likelihood at the start of each cycle */
  history: number[]
  /** latent SD in the reported metric (estimated for Rasch and with anchors, else 1) */
  populationSd: number
  /** latent mean in the reported metric (estimated with anchors, else 0) */
  populationMean: number
  populationSdSe: number | null
  items: CalibratedItem[]
}

/** log(1 + e^x) without overflow. */
function softplus(x: number): number {
  return x > 0 ? x + Math.log1p(Math.exp(-x)) : Math.log1p(Math.exp(x))
}

function logistic(x: number): number {
  return 1 / (1 + Math.exp(-x))
}

/**
 * Calibrate items by Bock–Aitkin EM.
 *
 * @throws RangeError on bad options
 * @example
 * ```ts
 * const result = calibrate(matrix, { model: '2pl' })
 * result.items[0] // => { status: 'converged', params: { a: 0.83, b: -3.36, c: 0 }, ... }
 * ```
 */
export function calibrate(matrix: ResponseMatrix, options: CalibrationOptions = {}): CalibrationResult {
  const model = options.model ?? '2pl'
  if (model !== 'rasch' && model !== '2pl') throw new RangeError(`calibration model must be rasch or 2pl (got ${String(model)})`)
  const D = options.D ?? D_LOGISTIC
  if (!(D > 0)) throw new RangeError(`scaling constant D must be > 0 (got ${D})`)
  const tolerance = options.tolerance ?? 1e-4
  const maxCycles = options.maxCycles ?? 500
  const estimateSd = model === 'rasch' && (options.estimateSd ?? true)
  const minResponses = options.minResponses ?? 10
  const maxA = options.maxA ?? 10
  const minA = options.minA ?? 0.05
  const maxAbsB = options.maxAbsB ?? 8
  const grid = normalGrid({ mean: 0, sd: 1 }, options.quadrature)
  const x = grid.nodes
  const K = x.length
  const J = matrix.nItems
  const fixed = options.fixed
  if (fixed && fixed.length !== J) throw new RangeError(`fixed has ${fixed.length} entries for ${J} items`)

  // ---- item screening
  const nResp = new Int32Array(J)
  const nCorrect = new Int32Array(J)
  for (let e = 0; e < matrix.item.length; e++) {
    nResp[matrix.item[e]]++
    nCorrect[matrix.item[e]] += matrix.response[e]
  }
  const status: ItemCalibrationStatus[] = new Array(J)
  // active: in the E-step; free: estimated in the M-step (active and not an anchor)
  const active = new Uint8Array(J)
  const free = new Uint8Array(J)
  for (let j = 0; j < J; j++) {
    const anchor = fixed?.[j]
    if (anchor) {
      status[j] = 'fixed'
      active[j] = nResp[j] > 0 ? 1 : 0
      continue
    }
    if (nResp[j] < minResponses) status[j] = 'too-few-responses'
    else if (nCorrect[j] === nResp[j]) status[j] = 'all-correct'
    else if (nCorrect[j] === 0) status[j] = 'all-wrong'
    else {
      status[j] = 'converged'
      active[j] = 1
      free[j] = 1
    }
  }

  // ---- parametrisation. Nodes x are standard normal and θ = μ + σx. Each item works on the node
  // scale as z = αx + β; in the θ metric z = D·a·(θ − b), so α = D·a·σ and β = D·a·(μ − b).
  // Without anchors μ = 0 and σ = 1 (2PL) or σ = commonAlpha/D (Rasch, a = 1). With anchors the
  // anchors fix the metric and μ, σ are estimated from the posterior moments each cycle.
  const anchored = Boolean(fixed?.some((anchor, j) => anchor && nResp[j] > 0))
  let mu = 0
  let sigma = 1
  const alpha = new Float64Array(J)
  const beta = new Float64Array(J)
  let commonAlpha = D
  /** θ-metric (a, b) of a non-anchor item from its node-scale (α, β) */
  const thetaParams = (j: number): { a: number; b: number } =>
    model === 'rasch' ? { a: 1, b: mu - beta[j] / D } : { a: alpha[j] / (D * sigma), b: mu - (beta[j] * sigma) / alpha[j] }
  for (let j = 0; j < J; j++) {
    const p = (nCorrect[j] + 0.5) / (nResp[j] + 1)
    alpha[j] = D
    beta[j] = Math.log(p / (1 - p)) * Math.sqrt(1 + (D / 1.702) ** 2)
    const anchor = fixed?.[j]
    if (anchor) {
      alpha[j] = D * anchor.a
      beta[j] = -D * anchor.a * anchor.b
    }
  }
  /** Anchored mode: move every item to the node scale of the current μ, σ (θ-metric values kept). */
  const rescaleNodes = (thetaValues: Array<{ a: number; b: number } | null>) => {
    commonAlpha = D * sigma
    for (let j = 0; j < J; j++) {
      const anchor = fixed?.[j]
      const values = anchor ?? thetaValues[j]
      if (!values) continue
      alpha[j] = D * values.a * sigma
      beta[j] = D * values.a * (mu - values.b)
    }
  }
  /** slope on the standard-normal node scale */
  const slopeOf = (j: number): number => {
    const anchor = fixed?.[j]
    if (model === 'rasch' && !anchor) return commonAlpha
    return alpha[j]
  }
  const guessOf = (j: number): number => fixed?.[j]?.c ?? 0

  const reported = (): Float64Array => {
    // reported parameters for the convergence test: θ-metric (a, b) per item, then σ and μ
    const out = new Float64Array(2 * J + 2)
    for (let j = 0; j < J; j++) {
      if (!free[j]) continue
      const { a, b } = thetaParams(j)
      out[2 * j] = a
      out[2 * j + 1] = b
    }
    out[2 * J] = sigma
    out[2 * J + 1] = mu
    return out
  }

  const logP = new Float64Array(J * K)
  const logQ = new Float64Array(J * K)
  const prob = new Float64Array(J * K)
  const buildTables = () => {
    for (let j = 0; j < J; j++) {
      if (!active[j]) continue
      const slope = slopeOf(j)
      const c = guessOf(j)
      for (let k = 0; k < K; k++) {
        const z = slope * x[k] + beta[j]
        if (c > 0) {
          const P = c + (1 - c) * logistic(z)
          logP[j * K + k] = Math.log(P)
          logQ[j * K + k] = Math.log(1 - c) - softplus(z)
          prob[j * K + k] = P
        } else {
          logP[j * K + k] = -softplus(-z)
          logQ[j * K + k] = -softplus(z)
          prob[j * K + k] = logistic(z)
        }
      }
    }
  }

  const n = new Float64Array(J * K)
  const r = new Float64Array(J * K)
  const post = new Float64Array(K)
  /** Posterior weights of person p into `post`; returns the person's marginal log-likelihood. */
  const posterior = (p: number): number => {
    for (let k = 0; k < K; k++) post[k] = grid.logWeights[k]
    for (let e = matrix.start[p]; e < matrix.start[p + 1]; e++) {
      const j = matrix.item[e]
      if (!active[j]) continue
      const table = matrix.response[e] === 1 ? logP : logQ
      const offset = j * K
      for (let k = 0; k < K; k++) post[k] += table[offset + k]
    }
    let max = -Infinity
    for (let k = 0; k < K; k++) if (post[k] > max) max = post[k]
    let total = 0
    for (let k = 0; k < K; k++) {
      post[k] = Math.exp(post[k] - max)
      total += post[k]
    }
    for (let k = 0; k < K; k++) post[k] /= total
    return max + Math.log(total)
  }

  // posterior moments of x summed over people (for the population update in anchored mode)
  let momentCount = 0
  let moment1 = 0
  let moment2 = 0
  // people who answered every active item add their posterior once to `everyone` instead of to
  // each item's n (complete designs then cost half as much); n is completed at the end
  let activeCount = 0
  for (let j = 0; j < J; j++) activeCount += active[j]
  const everyone = new Float64Array(K)
  const eStep = (): number => {
    n.fill(0)
    r.fill(0)
    everyone.fill(0)
    momentCount = 0
    moment1 = 0
    moment2 = 0
    let logLik = 0
    for (let p = 0; p < matrix.nPersons; p++) {
      if (matrix.start[p + 1] === matrix.start[p]) continue
      logLik += posterior(p)
      let m1 = 0
      let m2 = 0
      for (let k = 0; k < K; k++) {
        m1 += post[k] * x[k]
        m2 += post[k] * x[k] * x[k]
      }
      momentCount++
      moment1 += m1
      moment2 += m2
      let answered = 0
      for (let e = matrix.start[p]; e < matrix.start[p + 1]; e++) answered += active[matrix.item[e]]
      const complete = answered === activeCount
      if (complete) for (let k = 0; k < K; k++) everyone[k] += post[k]
      for (let e = matrix.start[p]; e < matrix.start[p + 1]; e++) {
        const j = matrix.item[e]
        if (!active[j]) continue
        const offset = j * K
        if (matrix.response[e] === 1) for (let k = 0; k < K; k++) r[offset + k] += post[k]
        if (!complete) for (let k = 0; k < K; k++) n[offset + k] += post[k]
      }
    }
    for (let j = 0; j < J; j++) {
      if (!active[j]) continue
      const offset = j * K
      for (let k = 0; k < K; k++) n[offset + k] += everyone[k]
    }
    return logLik
  }

  /** Newton–Raphson on (α_j, β_j) for one 2PL item against the expected counts. */
  const mStep2pl = (j: number) => {
    let a = alpha[j]
    let b = beta[j]
    const offset = j * K
    for (let iteration = 0; iteration < 25; iteration++) {
      let ga = 0
      let gb = 0
      let haa = 0
      let hab = 0
      let hbb = 0
      for (let k = 0; k < K; k++) {
        const P = logistic(a * x[k] + b)
        const residual = r[offset + k] - n[offset + k] * P
        const w = n[offset + k] * P * (1 - P)
        ga += residual * x[k]
        gb += residual
        haa += w * x[k] * x[k]
        hab += w * x[k]
        hbb += w
      }
      const det = haa * hbb - hab * hab
      if (!(det > 0)) break
      let da = (hbb * ga - hab * gb) / det
      let db = (haa * gb - hab * ga) / det
      const size = Math.max(Math.abs(da), Math.abs(db))
      if (size > 1) {
        da /= size
        db /= size
      }
      a += da
      b += db
      if (Math.min(size, 1) < 1e-10) break
    }
    alpha[j] = a
    beta[j] = b
  }

  /** Rasch M-step: intercepts given the common slope, then the common slope (when σ is free). */
  const mStepRasch = () => {
    for (let pass = 0; pass < 3; pass++) {
      for (let j = 0; j < J; j++) {
        if (!free[j]) continue
        const offset = j * K
        let b = beta[j]
        for (let iteration = 0; iteration < 25; iteration++) {
          let g = 0
          let h = 0
          for (let k = 0; k < K; k++) {
            const P = logistic(commonAlpha * x[k] + b)
            g += r[offset + k] - n[offset + k] * P
            h += n[offset + k] * P * (1 - P)
          }
          if (!(h > 0)) break
          const step = Math.max(-1, Math.min(1, g / h))
          b += step
          if (Math.abs(step) < 1e-10) break
        }
        beta[j] = b
      }
      if (!estimateSd || anchored) continue
      for (let iteration = 0; iteration < 25; iteration++) {
        let g = 0
        let h = 0
        for (let j = 0; j < J; j++) {
          // anchors with a lower asymptote are left out of the slope update (their score differs)
          if (!active[j] || guessOf(j) > 0) continue
          const offset = j * K
          const scale = fixed?.[j]?.a ?? 1
          for (let k = 0; k < K; k++) {
            const P = logistic(commonAlpha * scale * x[k] + beta[j])
            g += (r[offset + k] - n[offset + k] * P) * x[k] * scale
            h += n[offset + k] * P * (1 - P) * x[k] * x[k] * scale * scale
          }
        }
        if (!(h > 0)) break
        const step = Math.max(-0.5, Math.min(0.5, g / h))
        commonAlpha += step
        if (Math.abs(step) < 1e-10) break
      }
      sigma = commonAlpha / D
    }
  }

  // ---- EM cycles
  const history: number[] = []
  let previous = reported()
  const lastChange = new Float64Array(2 * J + 2)
  let converged = false
  let cycles = 0
  const anyActive = free.some((flag) => flag === 1)
  while (anyActive && cycles < maxCycles) {
    cycles++
    buildTables()
    history.push(eStep())
    if (model === 'rasch') mStepRasch()
    else for (let j = 0; j < J; j++) if (free[j]) mStep2pl(j)
    if (anchored && momentCount > 0) {
      // population update: θ = μ + σx, so the posterior moments give μ' = μ + σ·E[x] and
      // σ'² = σ²·(E[x²] − E[x]²), averaged over people (Bock & Aitkin 1981, empirical prior)
      const thetaValues = Array.from({ length: J }, (_, j) => (free[j] ? thetaParams(j) : null))
      const meanX = moment1 / momentCount
      const varianceX = Math.max(moment2 / momentCount - meanX * meanX, 1e-6)
      mu += sigma * meanX
      if (model === '2pl' || estimateSd) sigma *= Math.sqrt(varianceX)
      rescaleNodes(thetaValues)
    }
    const current = reported()
    let maxChange = 0
    for (let i = 0; i < current.length; i++) {
      const item = i < 2 * J ? i >> 1 : -1
      if (item >= 0 && !free[item]) continue
      lastChange[i] = Math.abs(current[i] - previous[i])
      if (lastChange[i] > maxChange) maxChange = lastChange[i]
    }
    previous = current
    if (!Number.isFinite(maxChange)) break
    if (maxChange < tolerance) {
      converged = true
      break
    }
  }
  if (!anyActive) converged = true
  buildTables()
  const logLikelihood = anyActive ? eStep() : 0

  // ---- per-item status
  const params: Array<ItemParams | null> = new Array(J).fill(null)
  const notes: Array<string | null> = new Array(J).fill(null)
  for (let j = 0; j < J; j++) {
    const anchor = fixed?.[j]
    if (anchor) {
      params[j] = { ...anchor }
      notes[j] = nResp[j] > 0 ? 'anchor: parameters held fixed' : 'anchor without responses'
      continue
    }
    if (!free[j]) {
      notes[j] =
        status[j] === 'too-few-responses'
          ? `only ${nResp[j]} responses (minimum ${minResponses})`
          : `${status[j] === 'all-correct' ? 'every' : 'no'} response correct: difficulty not identifiable`
      continue
    }
    const { a, b } = thetaParams(j)
    if (!Number.isFinite(a) || !Number.isFinite(b) || (model === '2pl' && (a < minA || a > maxA)) || Math.abs(b) > maxAbsB) {
      status[j] = 'out-of-range'
      notes[j] = `estimate a = ${a.toFixed(3)}, b = ${b.toFixed(3)} outside the plausible range`
      params[j] = a > 0 && Number.isFinite(b) ? { a, b, c: 0 } : null
      continue
    }
    params[j] = { a, b, c: 0 }
    if (!converged && (lastChange[2 * j] >= tolerance || lastChange[2 * j + 1] >= tolerance)) {
      status[j] = 'not-converged'
      notes[j] = `still changing by ${Math.max(lastChange[2 * j], lastChange[2 * j + 1]).toExponential(2)} after ${cycles} cycles`
    }
  }

  // ---- diagnostics: XPD standard errors and item fit
  const populationSd = sigma
  let seA: Float64Array | null = null
  let seB: Float64Array | null = null
  let populationSdSe: number | null = null
  let fits: ItemFit[] | null = null
  if ((options.diagnostics ?? true) && anyActive) {
    const computed = standardErrors()
    if (computed) ({ seA, seB, populationSdSe } = computed)
    const scored = params.map((item) => item ?? { a: 1, b: 0, c: 0 })
    const usable = active.map((flag, j) => (flag && params[j] ? 1 : 0))
    const activeMatrix = onlyActive(matrix, usable)
    // person measures for fit: finite MLEs; people with extreme scores carry no fit information and
    // are left out, as in Rasch practice (EAP measures would bias the mean squares towards overfit)
    const thetas = estimateAbilities(scored, activeMatrix, { method: 'mle', D }).map((estimate) =>
      estimate.method === 'mle' ? estimate.theta : Number.NaN,
    )
    fits = itemFit(scored, activeMatrix, thetas, D)
  }

  const items: CalibratedItem[] = []
  for (let j = 0; j < J; j++) {
    items.push({
      index: j,
      status: status[j],
      params: params[j],
      se: free[j] && seB ? { a: seA ? seA[j] : null, b: seB[j] } : null,
      fit: active[j] && params[j] && fits ? fits[j] : null,
      nResponses: nResp[j],
      proportionCorrect: nResp[j] > 0 ? nCorrect[j] / nResp[j] : Number.NaN,
      note: notes[j],
    })
  }
  return { model, D, converged, cycles, logLikelihood, history, populationSd, populationMean: mu, populationSdSe, items }

  /** Cross-product (XPD) information from per-person scores, inverted, then the delta method. */
  function standardErrors(): { seA: Float64Array | null; seB: Float64Array; populationSdSe: number | null } | null {
    const index = new Int32Array(J).fill(-1)
    let m = 0
    for (let j = 0; j < J; j++) if (free[j]) index[j] = m++
    const perItem = model === '2pl' ? 2 : 1
    const slopeIndex = model === 'rasch' && estimateSd && !anchored ? m * perItem : -1
    const dim = m * perItem + (slopeIndex >= 0 ? 1 : 0)
    const info = new Float64Array(dim * dim)
    const score = new Float64Array(dim)
    const touched: number[] = []
    for (let p = 0; p < matrix.nPersons; p++) {
      if (matrix.start[p + 1] === matrix.start[p]) continue
      posterior(p)
      touched.length = 0
      let slopeScore = 0
      for (let e = matrix.start[p]; e < matrix.start[p + 1]; e++) {
        const j = matrix.item[e]
        if (!active[j]) continue
        const u = matrix.response[e]
        let sx = 0
        let s1 = 0
        for (let k = 0; k < K; k++) {
          const residual = post[k] * (u - prob[j * K + k])
          s1 += residual
          sx += residual * x[k]
        }
        if (!free[j]) {
          if (model === 'rasch' && guessOf(j) === 0) slopeScore += sx * (fixed?.[j]?.a ?? 1)
          continue
        }
        const at = index[j] * perItem
        if (model === '2pl') {
          score[at] = sx
          score[at + 1] = s1
          touched.push(at, at + 1)
        } else {
          score[at] = s1
          touched.push(at)
          slopeScore += sx
        }
      }
      if (slopeIndex >= 0) {
        score[slopeIndex] = slopeScore
        touched.push(slopeIndex)
      }
      for (const i of touched) for (const k of touched) info[i * dim + k] += score[i] * score[k]
      for (const i of touched) score[i] = 0
    }
    const cov = invertSpd(info, dim)
    if (!cov) return null
    const outA = model === '2pl' ? new Float64Array(J).fill(Number.NaN) : null
    const outB = new Float64Array(J).fill(Number.NaN)
    for (let j = 0; j < J; j++) {
      if (!free[j]) continue
      const at = index[j] * perItem
      if (model === '2pl') {
        const va = cov[at * dim + at]
        const vb = cov[(at + 1) * dim + at + 1]
        const cab = cov[at * dim + at + 1]
        const a = alpha[j]
        const b = beta[j]
        outA![j] = Math.sqrt(va) / (D * sigma)
        // b = μ − βσ/α: ∂b/∂α = βσ/α², ∂b/∂β = −σ/α (μ and σ taken as known)
        const ga = (b * sigma) / (a * a)
        const gb = -sigma / a
        outB[j] = Math.sqrt(Math.max(ga * ga * va + gb * gb * vb + 2 * ga * gb * cab, 0))
      } else {
        outB[j] = Math.sqrt(cov[at * dim + at]) / D
      }
    }
    const sdSe = slopeIndex >= 0 ? Math.sqrt(cov[slopeIndex * dim + slopeIndex]) / D : null
    return { seA: outA, seB: outB, populationSdSe: sdSe }
  }
}

/** Copy of a matrix without responses to inactive items (so fit and EAP ignore them). */
function onlyActive(matrix: ResponseMatrix, active: Uint8Array): ResponseMatrix {
  let count = 0
  for (let e = 0; e < matrix.item.length; e++) if (active[matrix.item[e]]) count++
  const start = new Int32Array(matrix.nPersons + 1)
  const item = new Int32Array(count)
  const response = new Uint8Array(count)
  let at = 0
  for (let p = 0; p < matrix.nPersons; p++) {
    start[p] = at
    for (let e = matrix.start[p]; e < matrix.start[p + 1]; e++) {
      if (!active[matrix.item[e]]) continue
      item[at] = matrix.item[e]
      response[at] = matrix.response[e]
      at++
    }
  }
  start[matrix.nPersons] = at
  return { nPersons: matrix.nPersons, nItems: matrix.nItems, start, item, response }
}
