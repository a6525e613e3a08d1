import { afterEach, describe, expect, it, vi } from 'vitest'
import { openDb } from '../../src/db/connection.ts'
import { DEFAULT_GRACE_MS, stillFresh } from '../../src/server/freshness.ts'
import { bearer, makeApp, postJson, signIn } from './helpers.ts'

const total = async (t: ReturnType<typeof makeApp>) => ((await (await t.app.request('/api/overview')).json()) as { total: number }).total

describe('response cache and skill index', () => {
  afterEach(() => {
    vi.useRealTimers()
  })

  it('serves fresh data after a change on the same connection, even one that emitted no event', async () => {
    const t = makeApp()
    expect(await total(t)).toBe(8)
    expect(await total(t)).toBe(8)
    t.db.prepare("INSERT INTO concepts(id, pref_label, type) VALUES ('fresh-skill', 'Fresh skill', 'hard')").run()
    expect(await total(t)).toBe(9)
    expect(await (await t.app.request('/?q=fresh')).text()).toContain('Fresh skill')
  })

  it('serves data another connection (another process) committed once the grace period has passed', async () => {
    vi.useFakeTimers({ toFake: ['Date'] })
    const t = makeApp()
    expect(await total(t)).toBe(8)
    const other = openDb(t.db.name)
    other.prepare("INSERT INTO concepts(id, pref_label, type) VALUES ('from-elsewhere', 'From elsewhere', 'soft')").run()
    other.close()
    // within the grace period the page built before the commit may still be served
    vi.advanceTimersByTime(DEFAULT_GRACE_MS - 100)
    expect(await total(t)).toBe(8)
    vi.advanceTimersByTime(200)
    expect(await total(t)).toBe(9)
    const soft = (await (await t.app.request('/api/overview?type=soft')).json()) as { rows: { id: string }[] }
    expect(soft.rows.map((r) => r.id)).toContain('from-elsewhere')
  })

  it('while another process commits again and again, each page is rebuilt at most once per grace period', async () => {
    vi.useFakeTimers({ toFake: ['Date'] })
    const t = makeApp()
    const other = openDb(t.db.name)
    const seen: number[] = []
    for (let i = 0; i < 40; i++) {
      other.prepare('INSERT INTO concepts(id, pref_label, type) VALUES (?, ?, ?)').run(`busy-${i}`, `Busy ${i}`, 'hard')
      seen.push(await total(t))
      vi.advanceTimersByTime(100)
    }
    other.close()
    // 40 commits over 4 s: the answer moved only when a grace period had passed since the last build
    const changes = seen.filter((v, i) => i > 0 && v !== seen[i - 1]).length
    expect(changes).toBeGreaterThanOrEqual(1)
    expect(changes).toBeLessThanOrEqual(Math.ceil(4000 / DEFAULT_GRACE_MS))
    expect(seen[0]).toBe(9)
    vi.advanceTimersByTime(DEFAULT_GRACE_MS)
    expect(await total(t)).toBe(8 + 40)
  })

  it('a write through the server is seen at once, whatever the grace period', async () => {
    vi.useFakeTimers({ toFake: ['Date'] })
    const t = makeApp()
    const snoozed = async () => ((await (await t.app.request('/api/courses')).json()) as { counts: { snoozed: number } }).counts.snoozed
    const before = await snoozed()
    const res = await postJson(t.app, '/api/courses/c-flash-101/snooze', { note: 'replacement course launches in spring', until: '2099-04-01' }, bearer())
    expect(res.status).toBeLessThan(300)
    expect(await snoozed()).toBe(before + 1)
  })

  it('freshness rule: own changes at once, shared changes after the grace period', () => {
    const built = { own: '4', shared: '9:1' }
    expect(stillFresh(built, 1000, { own: '4', shared: '9:1' }, 99_000, 2000)).toBe(true)
    expect(stillFresh(built, 1000, { own: '4', shared: '9:2' }, 2999, 2000)).toBe(true)
    expect(stillFresh(built, 1000, { own: '4', shared: '9:2' }, 3000, 2000)).toBe(false)
    expect(stillFresh(built, 1000, { own: '5', shared: '9:1' }, 1001, 2000)).toBe(false)
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
