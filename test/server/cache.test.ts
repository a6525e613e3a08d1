import { describe, expect, it } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { makeApp, signIn } from './helpers.ts'

const total = async (t: ReturnType<typeof makeApp>) => ((await (await t.app.request('/api/overview')).json()) as { total: number }).total

describe('response cache and skill index', () => {
  it('serves fresh data after a change on the same connection, even one that emitted no event', async () => {
    const t = makeApp()
    expect(await total(t)).toBe(8)
    expect(await total(t)).toBe(8)
    t.db.prepare("INSERT INTO concepts(id, pref_label, type) VALUES ('fresh-skill', 'Fresh skill', 'hard')").run()
    expect(await total(t)).toBe(9)
    expect(await (await t.app.request('/?q=fresh')).text()).toContain('Fresh skill')
  })

  it('serves fresh data after another connection (another process) committed', async () => {
    const t = makeApp()
    expect(await total(t)).toBe(8)
    const other = openDb(t.db.name)
    other.prepare("INSERT INTO concepts(id, pref_label, type) VALUES ('from-elsewhere', 'From elsewhere', 'soft')").run()
    other.close()
    expect(await total(t)).toBe(9)
    const soft = (await (await t.app.request('/api/overview?type=soft')).json()) as { rows: { id: string }[] }
    expect(soft.rows.map((r) => r.id)).toContain('from-elsewhere')
  })

  it('never serves a signed-in page (with its CSRF field) to someone else', async () => {
    const t = makeApp()
    const anonymous = await (await t.app.request('/courses')).text()
    const { cookie, csrf } = await signIn(t.app)
    const mine = await (await t.app.request('/courses', { headers: { Cookie: cookie } })).text()
    expect(mine).toContain(csrf)
    const again = await (await t.app.request('/courses')).text()
    expect(again).toBe(anonymous)
    expect(again).not.toContain(csrf)
    const other = await signIn(t.app)
    expect(await (await t.app.request('/courses', { headers: { Cookie: other.cookie } })).text()).not.toContain(csrf)
  })

  it('re-sorts from the index after the plan changes the ranking', async () => {
    const t = makeApp()
    const first = ((await (await t.app.request('/api/overview')).json()) as { rows: { id: string }[] }).rows[0]!.id
    t.db.prepare("UPDATE plan_outputs SET rank = rank + 1 WHERE kind = 'need'").run()
    t.db.prepare("UPDATE plan_outputs SET rank = 1 WHERE kind = 'need' AND key = 'negotiation'").run()
    const now = ((await (await t.app.request('/api/overview')).json()) as { rows: { id: string }[] }).rows[0]!.id
    expect(first).toBe('kubernetes')
    expect(now).toBe('negotiation')
  })
})
