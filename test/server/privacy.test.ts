import { describe, expect, it } from 'vitest'
import type { CoverageRow } from '../../src/db/dashboard.ts'
import { skillCoverage } from '../../src/server/privacy.ts'
import { makeApp } from './helpers.ts'

function row(role: string, headcount: number, assessed: number, meeting: number): CoverageRow {
  return {
    skill_id: 's', role, required_theta: 0.5, headcount, assessed, unknown: headcount - assessed, stale: 0, expected_meeting: meeting,
    coverage: assessed ? meeting / assessed : null, expected_gap: assessed - meeting, gap_low: assessed - meeting - 1, gap_high: assessed - meeting + 1, updated_at: '',
  }
}

describe('skillCoverage (small-group and complementary suppression)', () => {
  it('hides a small role and, because the total is shown, the next smallest role too', () => {
    const { total, byRole } = skillCoverage([row('A', 14, 12, 6.6), row('B', 3, 3, 2.1)], 5)
    expect(byRole.map((r) => [r.role, r.suppressed, r.coverage])).toEqual([['A', true, null], ['B', true, null]])
    expect(byRole[1]!.headcount).toBeNull() // 3 people: not even the headcount
    expect(byRole[0]!.headcount).toBeNull() // else 17 − 14 would give the 3 back
    expect(total!.headcount).toBe(17)
    expect(total!.suppressed).toBe(false)
    expect(total!.coverage).toBeCloseTo(8.7 / 15, 12)
    expect(total!.gap).toBeCloseTo(15 - 8.7, 12)
  })

  it('stops hiding once the hidden roles together reach the minimum', () => {
    const { byRole } = skillCoverage([row('A', 25, 20, 10), row('B', 12, 12, 6), row('C', 4, 3, 1)], 5)
    expect(byRole.map((r) => r.suppressed)).toEqual([false, true, true])
    expect(byRole[0]!.coverage).toBe(0.5)
    expect(byRole.map((r) => r.headcount)).toEqual([25, null, null])
  })

  it('hides the total when everyone together is under the minimum', () => {
    const { total, byRole } = skillCoverage([row('A', 2, 2, 1), row('B', 2, 1, 1)], 5)
    expect(total!.suppressed).toBe(true)
    expect(total!.coverage).toBeNull()
    expect(byRole.every((r) => r.suppressed)).toBe(true)
  })

  it('shows a lone role at or above the minimum', () => {
    const { total, byRole } = skillCoverage([row('A', 9, 8, 5.2)], 5)
    expect(byRole[0]!.coverage).toBeCloseTo(0.65, 12)
    expect(total!.coverage).toBeCloseTo(0.65, 12)
  })
})

describe('people data on the pages and API', () => {
  it('the skill page and its JSON hide both roles of Kubernetes but show the total', async () => {
    const t = makeApp()
    const json = (await (await t.app.request('/api/skills/kubernetes')).json()) as { coverage: { role: string | null; coverage: number | null; suppressed: boolean }[] }
    expect(json.coverage.map((c) => [c.role, c.suppressed])).toEqual([['Data steward', true], ['Platform engineer', true], [null, false]])
    const text = JSON.stringify(json)
    expect(text).not.toContain('0.55') // the hidden roles' stored coverage figures
    expect(text).not.toContain('"coverage":0.7')
    const page = await (await t.app.request('/skills/kubernetes')).text()
    expect(page).toContain('hidden')
    const csv = await (await t.app.request('/api/skills/kubernetes/coverage?format=csv')).text()
    expect(csv).not.toMatch(/Data steward,0\.2,\d/)
  })

  it('a larger minimum group size hides more (config.ability.minGroupSize)', async () => {
    const t = makeApp({ config: { ability: { minGroupSize: 10 } } })
    const o = (await (await t.app.request('/api/overview?role=Data%20steward')).json()) as { rows: { id: string; coverage: { suppressed: boolean } | null }[] }
    expect(o.rows.find((r) => r.id === 'python')!.coverage!.suppressed).toBe(true)
    const small = makeApp()
    const o5 = (await (await small.app.request('/api/overview?role=Data%20steward')).json()) as { rows: { id: string; coverage: { suppressed: boolean; coverage: number } | null }[] }
    expect(o5.rows.find((r) => r.id === 'python')!.coverage).toMatchObject({ suppressed: false })
  })

  it('reskilling counts under the minimum are hidden, and no person id ever leaves the server', async () => {
    const t = makeApp({ config: { ability: { minGroupSize: 20 } } })
    const d = (await (await t.app.request('/api/reskilling')).json()) as { candidates: { strong: number | null }[]; forecast: { reskill: number | null; note: string | null }[] }
    expect(d.candidates.length).toBeGreaterThan(0)
    expect(d.candidates.every((c) => c.strong === null)).toBe(true)
    expect(d.forecast.every((f) => f.reskill === null && f.note !== null)).toBe(true)
    const shown = makeApp()
    const d5 = (await (await shown.app.request('/api/reskilling')).json()) as { candidates: { strong: number | null }[] }
    expect(d5.candidates[0]!.strong).toBe(14)
    for (const path of ['/api/reskilling', '/api/overview', '/api/skills/kubernetes', '/api/skills/cobol', '/api/courses', '/reskilling', '/skills/cobol']) {
      const body = await (await shown.app.request(path)).text()
      expect(body, path).not.toMatch(/personId|person_id|"p\d+"|"d\d+"/)
    }
  })
})
