/**
 * @module curves/fit-all
 * Fits every skill of a run and controls the false discovery rate across them: the current-trend
 * p-values of all fitted skills are adjusted together by Benjamini–Hochberg before any state is
 * decided, so that with thousands of skills tested each run, at most a fraction q of the skills
 * flagged rising or declining are expected to be false alarms.
 */
import { benjaminiHochberg } from '../stats/benjamini-hochberg.ts'
import type { CurvesConfig } from './config.ts'
import { analyseSkill, decideSkill, describeSkill } from './fit-skill.ts'
import type { DescribedSkill, SkillCurve } from './fit-skill.ts'
import { monthIndex } from './months.ts'
import type { SkillSeriesInput } from './series.ts'

export interface FitAllResult {
  curves: SkillCurve[]
  /** skills whose input could not be used, with the reason; the others were fitted */
  failures: { id: string; error: string }[]
  /** number of p-values in the BH family */
  tested: number
}

/**
 * Fit all skills with a shared window end (the latest month of any skill) and BH across skills.
 * A skill whose input is malformed is reported in `failures` and does not stop the others.
 * `previous`: each skill's state at the last fit (the steady band's hysteresis needs it).
 *
 * @example
 * ```ts
 * fitAll(inputs, DEFAULT_CURVES_CONFIG).curves.filter((c) => c.state === 'declining')
 * ```
 */
export function fitAll(inputs: readonly SkillSeriesInput[], config: CurvesConfig, previous: ReadonlyMap<string, string> = new Map()): FitAllResult {
  let lastMonth = -Infinity
  for (const input of inputs) {
    for (const month of input.months) {
      try {
        lastMonth = Math.max(lastMonth, monthIndex(month))
      } catch {
        // reported per skill below
      }
    }
  }
  // each analysis is described at once and let go: only the small described curves wait for BH
  const described: DescribedSkill[] = []
  const failures: FitAllResult['failures'] = []
  for (const input of inputs) {
    try {
      described.push(describeSkill(analyseSkill(input, config, Number.isFinite(lastMonth) ? lastMonth : undefined)))
    } catch (error) {
      failures.push({ id: input.id, error: error instanceof Error ? error.message : String(error) })
    }
  }
  const pValues = described.map((skill) => (skill.curve.pValue !== null && Number.isFinite(skill.curve.pValue) ? skill.curve.pValue : Number.NaN))
  const adjusted = benjaminiHochberg(pValues, config.q).adjusted
  const curves = described.map((skill, i) => decideSkill(skill, Number.isNaN(adjusted[i]!) ? null : adjusted[i]!, config, previous.get(skill.curve.id) ?? null))
  return { curves, failures, tested: pValues.filter((p) => !Number.isNaN(p)).length }
}
