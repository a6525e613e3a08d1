/**
 * The fit's series inputs built the plain way from a MonthlyDemand (maps per concept, series and
 * month), as the fit stage built them before it read the aggregates into arrays: the reference
 * `demandInputs` (src/curves/stage.ts) is checked against, on the recomputation from documents and
 * mentions.
 */
import type { MonthlyDemand } from '../../src/db/curves.ts'
import { isMonth } from '../../src/curves/months.ts'
import type { SkillSeriesInput } from '../../src/curves/series.ts'

export function referenceInputs(demand: MonthlyDemand): SkillSeriesInput[] {
  const months = demand.months.filter((month) => isMonth(month))
  const N = {
    external: months.map((month) => demand.totals.external.get(month) ?? 0),
    internal: months.map((month) => demand.totals.internal.get(month) ?? 0),
  }
  const hasExternal = N.external.some((total) => total > 0)
  const hasInternal = N.internal.some((total) => total > 0)
  return [...demand.labels].map(([id, label]) => {
    const counts = demand.mentions.get(id)
    const input: SkillSeriesInput = { id, label, months }
    if (hasExternal) input.external = { n: months.map((month) => counts?.external.get(month) ?? 0), N: N.external }
    if (hasInternal) input.internal = { n: months.map((month) => counts?.internal.get(month) ?? 0), N: N.internal }
    return input
  })
}
