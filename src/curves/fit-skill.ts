/**
 * @module curves/fit-skill
 * Fits one skill's demand curve from its monthly counts: trend and half-life by quasi-Poisson
 * regression (with month-of-year terms when they earn their place and a change in slope when there
 * is one), the Mann–Kendall and Theil–Sen companions, emergence and bursts, and a 12-month forecast.
 * Pure: no database, no clock. The state needs the Benjamini–Hochberg adjustment across all skills,
 * which fit-all.ts applies; fitSkill on its own treats the skill as the only test.
 */
import { batchedBursts } from '../stats/kleinberg-batched.ts'
import { emergenceIndex } from '../stats/emergence.ts'
import { rateSummary } from '../stats/half-life.ts'
import { mannKendall } from '../stats/mann-kendall.ts'
import { poissonGlm, summarizeCoefficient } from '../stats/poisson-glm.ts'
import type { CoefficientSummary } from '../stats/poisson-glm.ts'
import { seasonalKendall } from '../stats/seasonal-kendall.ts'
import { theilSen } from '../stats/theil-sen.ts'
import type { CurvesConfig } from './config.ts'
import { forecastSkill } from './forecast.ts'
import { ForecastBands } from './forecast.ts'
import type { ForecastResult } from './forecast.ts'
import { monthOfYear } from './months.ts'
import { buildGrid, gridMonth, gridMonths } from './series.ts'
import type { SkillGrid, SkillSeriesInput } from './series.ts'
import { classifyState } from './state.ts'
import type { SkillState, StateEvidence } from './state.ts'
import { detectChange } from './change-point.ts'
import { chooseSeasonalTerms } from './seasonal-selection.ts'
import type { SeasonalChoice } from './seasonal-selection.ts'
import { combinedAt, currentSlope, currentSlopeWithBreak, fittedIndex, fitTrend, observationsFrom, stackObservations } from './trend-model.ts'
import type { StackedObservations, TrendFit } from './trend-model.ts'
import { slabFloat64 } from '../stats/typed-slab.ts'

/** A statistical test as recorded in the details (the dashboard lists them). */
export interface TestRecord {
  name: string
  statistic: number | null
  p: number | null
  pAdjusted: number | null
  text: string
}

/** Everything about one skill except what depends on the other skills (the BH adjustment). */
export interface SkillAnalysis {
  id: string
  label: string
  latestMonth: string | null
  insufficientReason: string | null
  /** which months the current trend describes: the whole window, since emergence, or since a change */
  regime: { kind: 'window' | 'emergence' | 'change'; from: string } | null
  /** current trend: slope per month of log share, over the regime */
  slope: CoefficientSummary | null
  /** whole-window log-linear slope, for comparison */
  fullSlope: CoefficientSummary | null
  annualGrowth: number | null
  annualGrowthInterval: [number, number] | null
  halfLifeMonths: number | null
  halfLifeInterval: [number, number | null] | null
  mannKendall: { s: number; tau: number; z: number; pValue: number; n: number; seasonal: boolean; variance: number } | null
  senSlope: { slope: number; lower: number | null; upper: number | null; relativeAnnual: number | null } | null
  change: {
    month: string
    pValue: number
    significant: boolean
    confirmedByMannKendall: boolean
    accepted: boolean
    slopeBefore: number | null
    slopeAfter: number | null
  } | null
  emergedMonth: string | null
  monthsSinceEmergence: number | null
  bursts: { level: number; start: string; end: string }[]
  latestShare: number | null
  fittedLatestShare: number | null
  forecast: ForecastResult | null
  /** month-of-year harmonics chosen by QAIC, and the candidates' QAIC */
  harmonics: number
  qaic: { harmonics: number; qaic: number }[]
  observedMonths: number
  mentions: number
  grid: SkillGrid
  /** the fitted trend model in use (null when the data were too thin) */
  trend: TrendFit | null
  /** optional parts left out because they could not be computed on this skill's data, with the reason */
  omitted: OmittedPart[]
}

/** An optional part of the analysis (change search, forecast, …) that could not be computed. */
export interface OmittedPart {
  part: string
  reason: string
}

const messageOf = (error: unknown): string => (error instanceof Error ? error.message : String(error))

/**
 * Run an optional part of the analysis; when it fails numerically (e.g. a rank-deficient design on a
 * very sparse skill), record why in `omitted` and use the fallback instead of losing the skill.
 */
function attempt<T>(omitted: OmittedPart[], part: string, compute: () => T, fallback: T): T {
  try {
    return compute()
  } catch (error) {
    omitted.push({ part, reason: messageOf(error) })
    return fallback
  }
}

/** The fitted curve of one skill, as stored and reported. */
export interface SkillCurve {
  id: string
  label: string
  state: SkillState
  stateReason: string
  annualGrowth: number | null
  annualGrowthInterval: [number, number] | null
  halfLifeMonths: number | null
  /** [low, high]; high is null when the interval reaches "never halves" */
  halfLifeInterval: [number, number | null] | null
  /** current slope of log share per month, its interval and p-values */
  beta: number | null
  betaInterval: [number, number] | null
  pValue: number | null
  pAdjusted: number | null
  mannKendall: SkillAnalysis['mannKendall']
  senSlope: SkillAnalysis['senSlope']
  changeMonth: string | null
  emergedMonth: string | null
  latestMonth: string | null
  latestShare: number | null
  forecastShare12: number | null
  forecastMethod: string | null
  /** the forecast as columns; `forecast.points()` gives the points (made once, on first call) */
  forecast: ForecastBands
  details: Record<string, unknown>
}

const finiteOrNull = (x: number | null | undefined): number | null => (x !== null && x !== undefined && Number.isFinite(x) ? x : null)

/** Mann–Kendall (or seasonal Kendall) of the combined index over the given months; null below 3 months. */
function kendallOf(grid: SkillGrid, positions: readonly number[], values: readonly number[], seasonal: boolean): SkillAnalysis['mannKendall'] {
  if (positions.length < 3) return null
  if (seasonal) {
    const result = seasonalKendall(values, positions, positions.map((t) => monthOfYear(grid.firstMonth + t)))
    return { s: result.s, tau: result.tau, z: result.z, pValue: result.pValue, n: result.n, seasonal: true, variance: result.variance }
  }
  const result = mannKendall(values, positions)
  return { s: result.s, tau: result.tau, z: result.z, pValue: result.pValue, n: result.n, seasonal: false, variance: result.variance }
}

/** One-sided Mann–Kendall p-value in a given direction (from the two-sided normal p-value). */
export function oneSidedP(result: { s: number; pValue: number }, direction: number): number {
  if (direction === 0) return 1
  return Math.sign(result.s) === direction ? result.pValue / 2 : 1 - result.pValue / 2
}

/**
 * IRLS starting values for the fit with a breakpoint: the fitted model's coefficients with a zero
 * slope change inserted after the slope column (the no-change fit is a point of the bigger model, a
 * few IRLS steps from its optimum; the fit converges to the same tolerance as from a cold start,
 * see test/curves/warm-start.test.ts).
 */
export function changedStart(linear: TrendFit): Float64Array {
  const from = linear.glm.coefficients
  const start = new Float64Array(from.length + 1)
  const hinge = linear.slopeColumn + 1
  for (let j = 0; j < hinge; j++) start[j] = from[j]!
  for (let j = hinge; j < from.length; j++) start[j + 1] = from[j]!
  return start
}

/**
 * The fit with a breakpoint, started from the no-change fit; when that start fails (on sparse
 * skills its near-zero means can leave the weighted design without full rank), the cold start
 * μ = y + 0.1, whose weights stay away from zero, is tried as before.
 */
export function fitChanged(observations: StackedObservations, linear: TrendFit, breakpoint: number, harmonics: number): TrendFit {
  const spec = { harmonics, breakpoint }
  try {
    return fitTrend(observations, spec, changedStart(linear))
  } catch {
    return fitTrend(observations, spec)
  }
}

/** Each source's own log-linear slope (no seasonal terms, no change), for comparison in the details. */
function sourceSlopes(trend: TrendFit, grid: SkillGrid): { name: string; estimate: number; lower: number; upper: number; p: number }[] {
  const obs = trend.observations
  return grid.sources.map((source, s) => {
    const rows: number[] = []
    for (let i = 0; i < obs.rows; i++) if (obs.source[i] === s) rows.push(i)
    const design = slabFloat64(rows.length * 2)
    rows.forEach((i, r) => {
      design[r] = 1
      design[rows.length + r] = obs.position[i]! - obs.centre
    })
    const glm = poissonGlm({ design, rows: rows.length, cols: 2, counts: rows.map((i) => obs.counts[i]!), offset: rows.map((i) => obs.logTotal[i]!) })
    const summary = summarizeCoefficient(glm, 1, { quasi: true })
    return { name: source.name, estimate: summary.estimate, lower: summary.lower, upper: summary.upper, p: summary.pValue }
  })
}

/**
 * χ²₁ quantile at 0.95 (3.8415; NIST/SEMATECH e-Handbook §1.3.6.7.4, upper critical values of the
 * chi-square distribution): the 95% profile-likelihood confidence set for the breakpoint
 */
const BREAK_SET_CHI2 = 3.8415

/**
 * The current slope after an accepted change, its interval widened for the uncertainty of the
 * break's position: the union of the slope's intervals over every breakpoint in a 95% profile
 * likelihood confidence set (candidates whose quasi-deviance is within χ²₁(0.95) of the best), with
 * the widened interval of Muggeo's linearisation at the chosen one (currentSlopeWithBreak). The
 * union covers with probability at least 1 − 0.05 − (1 − level) = 90% at the default level (the
 * union over a confidence set for a nuisance parameter, Berger & Boos 1994, JASA 89:1012–1016, from
 * memory); in the seeded simulations of test/curves/change-coverage.test.ts it covers about 98%,
 * the plain interval at the chosen month about 70%. The estimate and its p-value are those of the
 * chosen breakpoint (the p-value from Muggeo's widened standard error).
 * Cost: one refit per candidate month walked (the set and one month beyond it on each side), only
 * for skills whose change was accepted.
 */
function slopeOverBreakSet(observations: StackedObservations, changed: TrendFit, config: CurvesConfig): CoefficientSummary {
  const slope = currentSlopeWithBreak(changed, config.level)
  const chosen = changed.spec.breakpoint!
  const dispersion = Number.isFinite(changed.glm.dispersion) && changed.glm.dispersion > 0 ? changed.glm.dispersion : 1
  const last = observations.position[observations.rows - 1]!
  const first = observations.position[0]!
  const fits: TrendFit[] = []
  let best = changed.glm.deviance
  // walk away from the chosen month on each side until a candidate falls outside the set (the
  // profile deviance rises away from its minimum), refitting each with all terms free
  const earliest = Math.max(first + config.change.minSegment - 1, last - config.change.windowMonths)
  const latest = last - config.change.minSegment
  for (const direction of [-1, 1]) {
    for (let tau = chosen + direction; tau >= earliest && tau <= latest; tau += direction) {
      let fit: TrendFit
      try {
        fit = fitTrend(observations, { harmonics: changed.spec.harmonics, breakpoint: tau }, changed.glm.coefficients)
      } catch {
        break // a candidate that cannot be fitted ends the walk on this side
      }
      fits.push(fit)
      best = Math.min(best, fit.glm.deviance)
      if ((fit.glm.deviance - best) / dispersion > BREAK_SET_CHI2) break
    }
  }
  let lower = slope.lower
  let upper = slope.upper
  for (const fit of fits) {
    if ((fit.glm.deviance - best) / dispersion > BREAK_SET_CHI2) continue
    const other = currentSlope(fit, config.level)
    if (Number.isFinite(other.lower)) lower = Math.min(lower, other.lower)
    if (Number.isFinite(other.upper)) upper = Math.max(upper, other.upper)
  }
  return { ...slope, lower, upper }
}

function insufficient(
  grid: SkillGrid,
  reason: string,
  observedMonths: number,
  mentions: number,
  latest: { month: string | null; share: number | null },
  omitted: OmittedPart[] = [],
): SkillAnalysis {
  return {
    id: grid.id,
    label: grid.label,
    latestMonth: latest.month,
    insufficientReason: reason,
    regime: null,
    slope: null,
    fullSlope: null,
    annualGrowth: null,
    annualGrowthInterval: null,
    halfLifeMonths: null,
    halfLifeInterval: null,
    mannKendall: null,
    senSlope: null,
    change: null,
    emergedMonth: null,
    monthsSinceEmergence: null,
    bursts: [],
    latestShare: latest.share,
    fittedLatestShare: null,
    forecast: null,
    harmonics: 0,
    qaic: [],
    observedMonths,
    mentions,
    grid,
    trend: null,
    omitted,
  }
}

/**
 * Analyse one skill: every figure of its demand curve except the cross-skill BH adjustment.
 *
 * @param lastMonth month index to end the window at (all skills of a run share it); default: the
 *   skill's own last month
 * @throws SeriesInputError for malformed input (naming the skill, month and field)
 * @example
 * ```ts
 * analyseSkill({ id: 'sql', months, external: { n, N } }, DEFAULT_CURVES_CONFIG).annualGrowth
 * ```
 */
export function analyseSkill(input: SkillSeriesInput, config: CurvesConfig, lastMonth?: number): SkillAnalysis {
  const grid = buildGrid(input, { weights: config.weights, windowMonths: config.windowMonths, minMonths: config.minMonths, lastMonth })
  const observedPositions: number[] = []
  for (let t = 0; t < grid.length; t++) if (!Number.isNaN(grid.combined[t]!)) observedPositions.push(t)
  const mentions = grid.sources.reduce((sum, source) => sum + source.mentions, 0)
  const lastObserved = observedPositions[observedPositions.length - 1]
  const latest = {
    month: lastObserved === undefined ? null : gridMonth(grid, lastObserved),
    share: lastObserved === undefined ? null : grid.combined[lastObserved]!,
  }
  if (grid.sources.length === 0) {
    const dropped = grid.dropped.map((d) => `${d.name}: ${d.reason}`).join('; ')
    return insufficient(grid, dropped ? `too few months of data (${dropped})` : 'no months with documents', 0, mentions, latest)
  }
  const observedMonths = observedPositions.length
  if (observedMonths < config.minMonths) {
    return insufficient(grid, `${observedMonths} months observed in the window, fewer than ${config.minMonths}`, observedMonths, mentions, latest)
  }
  if (mentions < config.minMentions) {
    return insufficient(grid, `${mentions} mentions in the window, fewer than ${config.minMentions}`, observedMonths, mentions, latest)
  }

  try {
    return analyseObserved(grid, config, { observedMonths, mentions, latest, lastObserved: lastObserved! })
  } catch (error) {
    // a safety net: every numerical step that may fail on thin data is guarded below, so this is
    // reached only by an unforeseen failure; the skill still gets a curve and a plain reason
    return insufficient(grid, `the analysis could not be completed (${messageOf(error)})`, observedMonths, mentions, latest)
  }
}

/** The analysis of a skill that passed the data-volume checks. */
function analyseObserved(
  grid: SkillGrid,
  config: CurvesConfig,
  known: { observedMonths: number; mentions: number; latest: { month: string | null; share: number | null }; lastObserved: number },
): SkillAnalysis {
  const { observedMonths, mentions, latest, lastObserved } = known
  const omitted: OmittedPart[] = []
  let observations: StackedObservations
  let seasonal: SeasonalChoice
  let fullSlope: CoefficientSummary
  try {
    observations = stackObservations(grid)
    seasonal = chooseSeasonalTerms(observations, {
      mode: config.seasonal,
      maxHarmonics: config.maxHarmonics,
      minMonths: config.seasonalMinMonths,
      observedMonths,
    })
    fullSlope = currentSlope(seasonal.fit, config.level)
    if (!Number.isFinite(fullSlope.estimate) || !Number.isFinite(fullSlope.lower) || !Number.isFinite(fullSlope.upper)) {
      throw new RangeError(`the slope or its interval is not finite (${fullSlope.estimate}, [${fullSlope.lower}, ${fullSlope.upper}])`)
    }
  } catch (error) {
    return insufficient(grid, `the trend regression could not be fitted (${messageOf(error)})`, observedMonths, mentions, latest)
  }
  if (seasonal.failedCandidate) omitted.push({ part: 'seasonal candidates', reason: seasonal.failedCandidate })
  const linear = seasonal.fit

  // Mann–Kendall over the whole window (seasonal Kendall when month-of-year terms were chosen), on
  // the information-weighted index, so that it weighs the sources as the regression does
  const pooledPositions: number[] = []
  for (let t = 0; t < grid.length; t++) if (!Number.isNaN(grid.pooled[t]!)) pooledPositions.push(t)
  const fullMannKendall = attempt(omitted, 'Mann–Kendall', () => kendallOf(grid, pooledPositions, pooledPositions.map((t) => grid.pooled[t]!), seasonal.harmonics > 0), null)

  // A skill that emerged from near zero is judged on the months since it emerged: its history is a
  // level shift from nothing, which neither a straight line nor a hinge describes. Otherwise a
  // change in slope is used when it is significant after the search correction AND Mann–Kendall on
  // the months since confirms the new slope's direction; else the whole window is the regime.
  const emergedPosition = attempt(omitted, 'emergence', () => emergenceIndex(grid.combined, grid.mentions, config.emergence), null)
  const lastPosition = grid.length - 1
  let regimeStart = 0
  let regimeTrend: TrendFit | null = null
  let regimeKind: 'window' | 'emergence' | 'change' = 'window'
  if (emergedPosition !== null && lastPosition - emergedPosition + 1 >= config.change.minSegment) {
    try {
      const since = observationsFrom(observations, emergedPosition)
      const harmonics = since.rows >= config.seasonalMinMonths * since.sourceCount ? seasonal.harmonics : 0
      regimeTrend = fitTrend(since, { harmonics, breakpoint: null })
      const sinceSlope = currentSlope(regimeTrend, config.level)
      if (!Number.isFinite(sinceSlope.lower) || !Number.isFinite(sinceSlope.upper)) throw new RangeError('the slope since emergence has no finite interval')
      regimeStart = emergedPosition
      regimeKind = 'emergence'
    } catch (error) {
      omitted.push({ part: 'trend since emergence', reason: messageOf(error) })
      regimeTrend = null
    }
  }
  const change = regimeKind === 'emergence' ? null : attempt(omitted, 'change search', () => detectChange(linear, config.change), null)
  let regimeMannKendall: SkillAnalysis['mannKendall'] = null
  let confirmed = false
  if (change?.significant) {
    try {
      const changed = fitChanged(observations, linear, change.breakpoint, seasonal.harmonics)
      const changedSlope = currentSlope(changed, config.level)
      if (!Number.isFinite(changedSlope.lower) || !Number.isFinite(changedSlope.upper)) throw new RangeError('the slope since the change has no finite interval')
      const after = pooledPositions.filter((t) => t > change.breakpoint)
      regimeMannKendall = kendallOf(grid, after, after.map((t) => grid.pooled[t]!), false)
      const direction = Math.sign(changedSlope.estimate)
      confirmed = regimeMannKendall !== null && oneSidedP(regimeMannKendall, direction) < config.mannKendallAlpha
      if (confirmed) {
        regimeTrend = changed
        regimeStart = change.breakpoint + 1
        regimeKind = 'change'
      }
    } catch (error) {
      omitted.push({ part: 'trend since change', reason: messageOf(error) })
      regimeMannKendall = null
      confirmed = false
    }
  }
  if (regimeKind === 'emergence') {
    const since = pooledPositions.filter((t) => t >= regimeStart)
    regimeMannKendall = attempt(omitted, 'Mann–Kendall since emergence', () => kendallOf(grid, since, since.map((t) => grid.pooled[t]!), false), null)
  }
  const trend = regimeTrend ?? linear
  const changeAccepted = regimeKind === 'change'
  // after a change, the interval also carries the uncertainty of the break's position
  const slope = regimeKind === 'change' ? slopeOverBreakSet(observations, trend, config) : regimeTrend ? currentSlope(trend, config.level) : fullSlope
  // The months after a change were chosen by looking at the data, so the slope's own p-value is too
  // small. A skill flagged through a change must show both the change (search-corrected) and the
  // new slope: the larger of the two p-values is a valid test of "changed and now moving"
  // (intersection–union test), and that is the p-value the cross-skill adjustment sees.
  if (changeAccepted) slope.pValue = Math.max(slope.pValue, change!.pValue)
  const rates = rateSummary(slope.estimate, slope.lower, slope.upper, 12)
  const mk = regimeKind === 'window' ? fullMannKendall : regimeMannKendall

  // Theil–Sen on the information-weighted index over the regime in use
  const regime = regimeKind === 'window' ? pooledPositions : pooledPositions.filter((t) => t >= regimeStart)
  let sen: SkillAnalysis['senSlope'] = null
  if (regime.length >= 3) {
    sen = attempt(
      omitted,
      'Theil–Sen slope',
      () => {
        const regimeValues = regime.map((t) => grid.pooled[t]!)
        const result = theilSen(regime, regimeValues, { level: config.level, mannKendallVariance: mk && !mk.seasonal ? mk.variance : undefined })
        const median = result.medianY
        return {
          slope: result.slope,
          lower: finiteOrNull(result.lower),
          upper: finiteOrNull(result.upper),
          relativeAnnual: median > 0 ? (12 * result.slope) / median : null,
        }
      },
      null,
    )
  }

  const bursts = attempt(
    omitted,
    'bursts',
    () =>
      batchedBursts(grid.mentions, grid.documents, config.bursts).bursts.map((burst) => ({
        level: burst.level,
        start: gridMonth(grid, burst.start),
        end: gridMonth(grid, burst.end - 1),
      })),
    [],
  )
  const forecast = attempt(omitted, 'forecast', () => forecastSkill(grid, trend, { horizon: config.horizonMonths, origins: config.forecastOrigins, minTrain: config.minMonths }), null)
  const fittedLatest = finiteOrNull(combinedAt(trend, grid, lastObserved).share)

  return {
    id: grid.id,
    label: grid.label,
    latestMonth: latest.month,
    insufficientReason: null,
    regime: { kind: regimeKind, from: gridMonth(grid, regimeStart) },
    slope,
    fullSlope,
    annualGrowth: rates.annualGrowth,
    annualGrowthInterval: [rates.annualGrowthLower, rates.annualGrowthUpper],
    halfLifeMonths: rates.halfLife,
    halfLifeInterval: rates.halfLifeInterval ? [rates.halfLifeInterval[0], finiteOrNull(rates.halfLifeInterval[1])] : null,
    mannKendall: mk,
    senSlope: sen,
    change: change
      ? {
          month: gridMonth(grid, change.breakpoint),
          pValue: change.pValue,
          significant: change.significant,
          confirmedByMannKendall: confirmed,
          accepted: changeAccepted,
          slopeBefore: change.slopeBefore,
          slopeAfter: change.slopeAfter,
        }
      : null,
    emergedMonth: emergedPosition === null ? null : gridMonth(grid, emergedPosition),
    monthsSinceEmergence: emergedPosition === null ? null : lastPosition - emergedPosition,
    bursts,
    latestShare: latest.share,
    fittedLatestShare: fittedLatest,
    forecast,
    harmonics: seasonal.harmonics,
    qaic: seasonal.candidates,
    observedMonths,
    mentions,
    grid,
    trend,
    omitted,
  }
}

/** The evidence the state rules read, from an analysis and its adjusted p-value. */
export function stateEvidence(analysis: SkillAnalysis, pAdjusted: number | null): StateEvidence {
  return {
    insufficientReason: analysis.insufficientReason,
    annualGrowth: analysis.annualGrowth,
    growthLower: analysis.annualGrowthInterval?.[0] ?? null,
    growthUpper: analysis.annualGrowthInterval?.[1] ?? null,
    pValue: analysis.slope?.pValue ?? null,
    pAdjusted,
    mannKendall: analysis.mannKendall ? { s: analysis.mannKendall.s, pValue: analysis.mannKendall.pValue } : null,
    monthsSinceEmergence: analysis.monthsSinceEmergence,
    fittedLatestShare: analysis.fittedLatestShare,
  }
}

/** A skill's curve before its state: everything but what the cross-skill adjustment decides. */
export interface DescribedSkill {
  curve: SkillCurve
  evidence: StateEvidence
  /** the half-life and its interval, kept until the state says whether to report them */
  halfLifeMonths: number | null
  halfLifeInterval: [number, number | null] | null
}

/**
 * Everything reported about a skill that does not depend on the other skills, built straight after
 * its analysis so that the analysis (grids, fits) can be let go while the other skills are fitted.
 *
 * @example
 * ```ts
 * decideSkill(describeSkill(analysis), 0.003, DEFAULT_CURVES_CONFIG).state // => e.g. 'declining'
 * ```
 */
export function describeSkill(analysis: SkillAnalysis): DescribedSkill {
  const slope = analysis.slope
  const tests: TestRecord[] = []
  if (slope) {
    tests.push({
      name: analysis.regime?.kind === 'change' ? 'trend since change (quasi-Poisson)' : analysis.regime?.kind === 'emergence' ? 'trend since emergence (quasi-Poisson)' : 'trend (quasi-Poisson)',
      statistic: finiteOrNull(slope.statistic),
      p: finiteOrNull(slope.pValue),
      pAdjusted: null,
      text: `log share changes by ${slope.estimate.toPrecision(3)} a month (t = ${slope.statistic.toFixed(2)})`,
    })
  }
  if (analysis.mannKendall) {
    const mk = analysis.mannKendall
    tests.push({
      name: mk.seasonal ? 'seasonal Kendall' : 'Mann–Kendall',
      statistic: mk.z,
      p: mk.pValue,
      pAdjusted: null,
      text: `S = ${mk.s}, tau = ${mk.tau.toFixed(3)} over ${mk.n} months`,
    })
  }
  if (analysis.change) {
    const change = analysis.change
    tests.push({
      name: 'change in slope (segmented regression, Davies-corrected)',
      statistic: null,
      p: change.pValue,
      pAdjusted: null,
      text:
        change.slopeBefore !== null && change.slopeAfter !== null
          ? `${change.accepted ? 'accepted' : 'not accepted'} after ${change.month}: slope ${change.slopeBefore.toPrecision(3)} then ${change.slopeAfter.toPrecision(3)} a month`
          : `no significant change (strongest candidate after ${change.month})`,
    })
  }
  const trend = analysis.trend
  const grid = analysis.grid
  // month series in column form ({ months, values }), the months array shared by all skills
  const months = gridMonths(grid)
  // plain double arrays: a missing month stays NaN here (unboxed, cheap for the garbage collector
  // while thousands of skills wait for the adjustment) and becomes null in JSON
  const column = (values: Float64Array): { months: readonly string[]; values: number[] } => {
    const plain = new Array<number>(values.length)
    for (let t = 0; t < values.length; t++) plain[t] = values[t]!
    return { months, values: plain }
  }
  // parts that failed on this skill's data are left out and named with the reason, never the skill
  const omitted = analysis.omitted.slice()
  const fitted = trend ? attempt(omitted, 'fitted curve', () => column(fittedIndex(trend, grid)), null) : null
  const combined = column(grid.combined)
  const forecast = analysis.forecast
  // the forecast as columns (forecast.ts ForecastBands); its points, in the shape the plan stage
  // (low/high = 95%) and the dashboard (lo80 … hi95) read, are made only when asked for
  const bands = forecast?.bands ?? ForecastBands.empty(grid.firstMonth + grid.length)
  const details: Record<string, unknown> = {
    model: trend
      ? `quasi-Poisson log-linear trend, common to ${grid.sources.map((s) => `${s.name} (index weight ${(100 * s.weight).toFixed(0)}%)`).join(' and ')}` +
        `${analysis.harmonics ? `, ${analysis.harmonics} month-of-year harmonic${analysis.harmonics > 1 ? 's' : ''}` : ''}` +
        `${analysis.change?.accepted ? `, slope change after ${analysis.change.month}` : ''}`
      : null,
    latestMonth: analysis.latestMonth,
    observedMonths: analysis.observedMonths,
    mentions: analysis.mentions,
    sources: grid.sources.map((source) => ({
      name: source.name,
      weight: source.weight,
      level: source.level,
      observedMonths: source.observedMonths,
      mentions: source.mentions,
    })),
    sourceSlopes: trend && grid.sources.length > 1 ? attempt(omitted, 'source slopes', () => sourceSlopes(trend, grid), null) : null,
    dispersion: trend ? finiteOrNull(trend.glm.dispersion) : null,
    qaic: analysis.qaic,
    droppedSources: grid.dropped,
    harmonics: analysis.harmonics,
    regime: analysis.regime,
    fullWindowSlope: analysis.fullSlope
      ? { estimate: analysis.fullSlope.estimate, lower: analysis.fullSlope.lower, upper: analysis.fullSlope.upper, p: analysis.fullSlope.pValue }
      : null,
    change: analysis.change,
    bursts: analysis.bursts,
    fittedLatestShare: analysis.fittedLatestShare,
    tests,
    fitted,
    combined,
    forecastMethod: forecast?.method ?? null,
    forecastLevel: 0.95,
    oneStepMse: forecast?.oneStepMse ?? null,
    forecastOrigins: forecast?.origins ?? 0,
    alternativeForecast12: forecast?.alternative12 ?? null,
    holt: forecast?.holt ?? null,
    forecast: bands,
    omittedParts: omitted,
  }
  const curve: SkillCurve = {
    id: analysis.id,
    label: analysis.label,
    state: 'insufficient-evidence',
    stateReason: '',
    annualGrowth: analysis.annualGrowth,
    annualGrowthInterval: analysis.annualGrowthInterval,
    halfLifeMonths: null,
    halfLifeInterval: null,
    beta: slope ? slope.estimate : null,
    betaInterval: slope ? [slope.lower, slope.upper] : null,
    pValue: slope ? slope.pValue : null,
    pAdjusted: null,
    mannKendall: analysis.mannKendall,
    senSlope: analysis.senSlope,
    changeMonth: analysis.change?.accepted ? analysis.change.month : null,
    emergedMonth: analysis.emergedMonth,
    latestMonth: analysis.latestMonth,
    latestShare: analysis.latestShare,
    forecastShare12: forecast ? forecast.share12 : null,
    forecastMethod: forecast?.method ?? null,
    forecast: bands,
    details,
  }
  return { curve, evidence: stateEvidence(analysis, null), halfLifeMonths: analysis.halfLifeMonths, halfLifeInterval: analysis.halfLifeInterval }
}

/**
 * Decide a described skill's state with its BH-adjusted p-value; the half-life is reported only for
 * declining and fading skills.
 */
export function decideSkill(described: DescribedSkill, pAdjusted: number | null, config: CurvesConfig, previous: string | null = null): SkillCurve {
  const decision = classifyState({ ...described.evidence, pAdjusted }, config, previous)
  const declining = decision.state === 'declining' || decision.state === 'fading'
  const curve = described.curve
  curve.state = decision.state
  curve.stateReason = decision.reason
  curve.pAdjusted = pAdjusted
  curve.halfLifeMonths = declining ? described.halfLifeMonths : null
  curve.halfLifeInterval = declining ? described.halfLifeInterval : null
  const tests = curve.details['tests'] as TestRecord[]
  if (tests.length && curve.pValue !== null) tests[0]!.pAdjusted = pAdjusted
  return curve
}

/**
 * The reported curve of a skill from its analysis and its BH-adjusted p-value.
 *
 * @example
 * ```ts
 * finishSkill(analysis, 0.003, DEFAULT_CURVES_CONFIG).state // => e.g. 'declining'
 * ```
 */
export function finishSkill(analysis: SkillAnalysis, pAdjusted: number | null, config: CurvesConfig): SkillCurve {
  return decideSkill(describeSkill(analysis), pAdjusted, config)
}

/**
 * Fit one skill on its own (its p-value is its own adjusted p-value: a family of one).
 *
 * @example
 * ```ts
 * fitSkill({ id: 'sql', months, external: { n, N } }, DEFAULT_CURVES_CONFIG).state
 * ```
 */
export function fitSkill(input: SkillSeriesInput, config: CurvesConfig): SkillCurve {
  const analysis = analyseSkill(input, config)
  return finishSkill(analysis, analysis.slope ? analysis.slope.pValue : null, config)
}
