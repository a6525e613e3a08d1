/**
 * @module plan/reskilling-forecast
 * How many people must be reskilled into each rising skill, per quarter over the planning horizon,
 * with an interval from a seeded simulation.
 *
 * Model, per target skill and simulated path (all monthly figures at the end of quarter q, t = 3q):
 * - exposed headcount H: the people in roles that require the skill now or are going to; each
 *   quarter leavers ~ Binomial(H, 1 − (1 − attrition)^(1/4)) and round(H·hiring/4) are hired;
 * - need(t) = min(H(t), N₀·D(t)/D(0)): N₀ people need the skill now (everyone in a role requiring
 *   it, plus, for a role that is going to require it, the share of its postings asking for it times
 *   its headcount) and the need follows the skill's forecast demand share D. D(t) is drawn from the
 *   curve's forecast band with one standard-normal draw per path (the band's half-width in log
 *   space over the normal quantile of its level), or, without bands, from the growth-rate interval;
 * - supply S: people meeting the requirement now (expected meeting from coverage plus the
 *   unassessed at the assessed meet rate); each quarter leavers ~ Binomial(S, same quarterly rate)
 *   and hires who meet it ~ Binomial(hires, hire meet rate);
 * - people to reskill by quarter q = max(0, need − S), in whole people.
 * The reported point is the median path value and the interval the central `reskilling.interval`
 * of the simulated values. Seeds derive from `plan.seed` and the skill id (random.ts).
 */
import { normalQuantile } from '../stats/normal-distribution.ts'
import type { PlanConfig } from './config.ts'
import type { SkillCurve } from './curve-model.ts'
import { createRng, hashSeed, quantileSorted, type Rng } from './random.ts'

export interface ForecastTarget {
  id: string
  label: string
  curve: SkillCurve
  /** people in roles requiring or going to require it */
  headcount: number
  /** people who need it now */
  needNow: number
  /** expected people meeting the requirement among the assessed */
  expectedMeeting: number
  assessed: number
  unknown: number
  /** people strong in a declining skill adjacent to this one who lack it */
  candidatesAvailable: number
}

export interface QuarterForecast {
  skillId: string
  label: string
  quarter: number
  /** 'YYYY-Qn' of the quarter's last month */
  period: string
  endMonth: string
  reskill: number
  low: number
  high: number
  /** median people needing the skill and meeting it at the quarter's end */
  need: number
  supply: number
  headcountNow: number
  needNow: number
  candidatesAvailable: number
}

export interface ForecastSettings {
  horizonQuarters: number
  attritionRate: number
  hiringRate: number
  seed: number
  reskilling: PlanConfig['reskilling']
  shareFloor: number
}

/** The demand ratio D(t)/D(0) along one path, for t = 3, 6, ... months. */
export function demandPath(curve: SkillCurve, months: readonly number[], z: number, shareFloor: number): number[] {
  const base = Math.max(curve.baseShare ?? 0, shareFloor)
  const logBase = Math.log(base)
  const bands = curve.bands
  if (bands.length > 0) {
    const zLevel = normalQuantile((1 + curve.bandLevel) / 2)
    const at = (t: number) => {
      // log-linear interpolation of the band's middle and half-width from (0, base, 0)
      let prev = { t: 0, mid: logBase, sd: 0 }
      for (const b of bands) {
        const cur = { t: b.monthsAhead, mid: Math.log(Math.max(b.mid, shareFloor)), sd: (Math.log(Math.max(b.high, shareFloor)) - Math.log(Math.max(b.low, shareFloor))) / (2 * zLevel) }
        if (t <= cur.t) {
          const w = cur.t === prev.t ? 1 : (t - prev.t) / (cur.t - prev.t)
          return { mid: prev.mid + w * (cur.mid - prev.mid), sd: prev.sd + w * (cur.sd - prev.sd) }
        }
        prev = cur
      }
      // beyond the last band: continue at the curve's rate, widening the spread in proportion
      const extra = t - prev.t
      return { mid: prev.mid + (curve.rate ?? 0) * extra, sd: prev.t > 0 ? (prev.sd * t) / prev.t : 0 }
    }
    return months.map((t) => {
      const { mid, sd } = at(t)
      return Math.exp(mid + z * sd - logBase)
    })
  }
  const rate = curve.rate ?? 0
  const sdRate = curve.rateLow !== null && curve.rateHigh !== null ? (curve.rateHigh - curve.rateLow) / (2 * normalQuantile(0.975)) : 0
  return months.map((t) => Math.exp((rate + z * sdRate) * t))
}

function simulatePath(target: ForecastTarget, s: ForecastSettings, rng: Rng, months: readonly number[]): { reskill: number[]; need: number[]; supply: number[] } {
  const quarterlyLeave = 1 - Math.pow(1 - s.attritionRate, 0.25)
  const meetRate = target.assessed > 0 ? Math.min(1, target.expectedMeeting / target.assessed) : s.reskilling.unknownMeetRate
  const hireMeet = s.reskilling.hireMeetRate ?? meetRate
  const ratio = demandPath(target.curve, months, rng.normal(), s.shareFloor)
  let headcount = target.headcount
  let supply = Math.round(target.expectedMeeting + target.unknown * meetRate)
  const reskill: number[] = []
  const need: number[] = []
  const sup: number[] = []
  for (let q = 0; q < months.length; q++) {
    const hires = Math.round((headcount * s.hiringRate) / 4)
    const supplyLeavers = rng.binomial(supply, quarterlyLeave)
    const otherLeavers = rng.binomial(headcount - supply, quarterlyLeave)
    headcount = headcount - supplyLeavers - otherLeavers + hires
    supply = supply - supplyLeavers + rng.binomial(hires, hireMeet)
    const needed = Math.min(headcount, target.needNow * ratio[q]!)
    need.push(needed)
    sup.push(supply)
    reskill.push(Math.max(0, Math.ceil(needed - supply - 1e-9)))
  }
  return { reskill, need, supply: sup }
}

function quarterLabel(month: string): string {
  const [y, m] = month.split('-').map(Number) as [number, number]
  return `${y}-Q${Math.floor((m - 1) / 3) + 1}`
}

function shiftMonth(month: string, delta: number): string {
  const [y, m] = month.split('-').map(Number) as [number, number]
  const index = y * 12 + m - 1 + delta
  return `${Math.floor(index / 12)}-${String((index % 12) + 1).padStart(2, '0')}`
}

/**
 * Simulates one target skill over the horizon.
 * @param baseMonth the latest month of data ('YYYY-MM'); quarter 1 ends three months later
 */
export function forecastTarget(target: ForecastTarget, baseMonth: string, s: ForecastSettings): QuarterForecast[] {
  const months = Array.from({ length: s.horizonQuarters }, (_, i) => 3 * (i + 1))
  const rng = createRng(hashSeed(s.seed, target.id))
  const runs = s.reskilling.simulations
  const reskill = months.map(() => new Float64Array(runs))
  const need = months.map(() => new Float64Array(runs))
  const supply = months.map(() => new Float64Array(runs))
  for (let k = 0; k < runs; k++) {
    const path = simulatePath(target, s, rng, months)
    for (let q = 0; q < months.length; q++) {
      reskill[q]![k] = path.reskill[q]!
      need[q]![k] = path.need[q]!
      supply[q]![k] = path.supply[q]!
    }
  }
  const lowP = (1 - s.reskilling.interval) / 2
  const sorted = (a: Float64Array) => Array.from(a).sort((x, y) => x - y)
  return months.map((t, q) => {
    const r = sorted(reskill[q]!)
    const endMonth = shiftMonth(baseMonth, t)
    return {
      skillId: target.id,
      label: target.label,
      quarter: q + 1,
      period: quarterLabel(endMonth),
      endMonth,
      reskill: Math.round(quantileSorted(r, 0.5)),
      low: Math.floor(quantileSorted(r, lowP)),
      high: Math.ceil(quantileSorted(r, 1 - lowP)),
      need: quantileSorted(sorted(need[q]!), 0.5),
      supply: quantileSorted(sorted(supply[q]!), 0.5),
      headcountNow: target.headcount,
      needNow: target.needNow,
      candidatesAvailable: target.candidatesAvailable,
    }
  })
}
