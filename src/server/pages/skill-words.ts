/**
 * @module server/pages/skill-words
 * A fitted curve in plain sentences: direction and size of the trend with its interval, whether the
 * trend survives the false-discovery correction across all skills, the half-life of a decline, the
 * change point and the forecast. Written for readers who do not read p-values.
 */

import * as f from '../format.ts'

/** "p = 0.012", or "p < 0.001" (not "p = < 0.001"). */
function pIs(p: number | null | undefined): string {
  const text = f.pValue(p)
  return text.startsWith('<') ? `p ${text}` : `p = ${text}`
}

export interface CurveSummary {
  state: string
  annualGrowth: number | null
  growthLow: number | null
  growthHigh: number | null
  halfLifeMonths: number | null
  halfLifeLow: number | null
  halfLifeHigh: number | null
  pValue: number | null
  pAdjusted: number | null
  latestShare: number | null
  forecastShare12: number | null
  forecastMethod: string | null
  changeMonth: string | null
  emergedMonth: string | null
  fittedAt: string
  model: string | null
}

/**
 * Sentences describing a fitted curve.
 * @param q the false discovery rate the curves stage used (config.curves.q)
 * @example describeCurve({ ...c, annualGrowth: 0.3, growthLow: 0.1, growthHigh: 0.5, pAdjusted: 0.01 }, 0.05)[1]
 * // => "The share of postings asking for it grows by about +30.0% a year (95% interval +10.0% to +50.0%)."
 */
export function describeCurve(c: CurveSummary, q: number): string[] {
  const out: string[] = []
  out.push(`Lifecycle state: ${c.state}.`)
  if (c.annualGrowth !== null && Number.isFinite(c.annualGrowth)) {
    const verb = c.annualGrowth > 0 ? 'grows' : c.annualGrowth < 0 ? 'shrinks' : 'stays level'
    const size = c.annualGrowth === 0 ? '' : ` by about ${f.growth(c.annualGrowth)}`
    const iv = c.growthLow !== null || c.growthHigh !== null ? ` (95% interval ${f.interval(c.growthLow, c.growthHigh, f.signedPct)})` : ''
    out.push(`The share of postings asking for it ${verb}${size}${iv}.`)
    if (c.growthLow !== null && c.growthHigh !== null && c.growthLow < 0 && c.growthHigh > 0) {
      out.push('The interval includes zero: the data are also consistent with no change at all.')
    }
  }
  if (c.pAdjusted !== null && Number.isFinite(c.pAdjusted)) {
    out.push(
      c.pAdjusted < q
        ? `This trend is unlikely to be chance: after correcting for testing every skill at once, ${pIs(c.pAdjusted)}, below the ${q} false-discovery level.`
        : `This trend could well be chance: after correcting for testing every skill at once, ${pIs(c.pAdjusted)}, not below the ${q} false-discovery level. Treat its direction as uncertain.`,
    )
  } else if (c.pValue !== null && Number.isFinite(c.pValue)) {
    out.push(`Trend test ${pIs(c.pValue)} (not corrected for testing many skills).`)
  }
  if (c.halfLifeMonths !== null && Number.isFinite(c.halfLifeMonths)) {
    const iv = c.halfLifeLow !== null || c.halfLifeHigh !== null ? ` (95% interval ${f.interval(c.halfLifeLow, c.halfLifeHigh, f.months)})` : ''
    out.push(`If the decline continues at this rate, demand halves about every ${f.months(c.halfLifeMonths)}${iv}.`)
  }
  if (c.emergedMonth) out.push(`It first appeared in meaningful numbers around ${f.month(c.emergedMonth)}.`)
  if (c.changeMonth) out.push(`The series changed course around ${f.month(c.changeMonth)}; the recent trend is read from the months after it.`)
  if (c.forecastShare12 !== null && Number.isFinite(c.forecastShare12)) {
    out.push(
      `Forecast for 12 months ahead: about ${f.share(c.forecastShare12)} of postings, from ${f.share(c.latestShare)} now${c.forecastMethod ? ` (${c.forecastMethod})` : ''}; the bands on the chart show the range.`,
    )
  }
  out.push(`Fitted ${f.when(c.fittedAt)}${c.model ? ` with ${c.model}` : ''}.`)
  return out
}
