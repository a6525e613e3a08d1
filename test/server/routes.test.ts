import { beforeAll, describe, expect, it } from 'vitest'
import { parse } from 'csv-parse/sync'
import { makeApp, type TestApp } from './helpers.ts'

const PAGES = ['/', '/skills/kubernetes', '/skills/cobol', '/courses', '/reskilling', '/taxonomy', '/taxonomy?status=all', '/sources', '/login']

const JSON_ROUTES = [
  '/api/overview', '/api/states', '/api/skills/kubernetes', '/api/skills/kubernetes/series', '/api/skills/kubernetes/coverage',
  '/api/skills/kubernetes/adjacent', '/api/skills/kubernetes/courses', '/api/skills/kubernetes/postings', '/api/courses', '/api/reskilling',
  '/api/reskilling/chart', '/api/reskilling/pathways', '/api/reskilling/candidates', '/api/reskilling/forecast', '/api/taxonomy',
  '/api/taxonomy/progress', '/api/concepts?q=kube', '/api/sources', '/api/runs', '/api/events', '/healthz',
]

const CSV_ROUTES = [
  '/api/overview', '/api/states', '/api/skills/kubernetes/series', '/api/skills/kubernetes/coverage', '/api/skills/kubernetes/adjacent',
  '/api/skills/kubernetes/courses', '/api/skills/kubernetes/postings', '/api/courses', '/api/reskilling/pathways', '/api/reskilling/candidates',
  '/api/reskilling/forecast', '/api/taxonomy', '/api/sources', '/api/runs', '/api/events',
]

let t: TestApp
beforeAll(() => {
  t = makeApp()
})

describe('pages', () => {
  it.each(PAGES)('%s renders with a CSP that forbids inline script', async (path) => {
    const res = await t.app.request(path)
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toMatch(/^text\/html/)
    const csp = res.headers.get('content-security-policy') ?? ''
    expect(csp).toContain("script-src 'self'")
    expect(csp).not.toContain('unsafe-inline')
    expect(csp).toContain("frame-ancestors 'none'")
    const body = await res.text()
    // every script is a file; no inline handlers or style attributes (CSP would block them anyway)
    expect(body).not.toMatch(/<script(?![^>]*\bsrc=)[^>]*>/i)
    expect(body).not.toMatch(/\son[a-z]+\s*=/i)
    expect(body).not.toMatch(/\sstyle\s*=/i)
    // the cautions are on every page
    expect(body).toContain('Estimates, not facts.')
    expect(body).toContain('A person decides.')
    expect(body).toContain('local privacy and employment law')
  })

  it('every data table on a page links to a CSV download that works', async () => {
    for (const path of ['/', '/skills/kubernetes', '/courses', '/reskilling', '/taxonomy', '/sources']) {
      const body = await (await t.app.request(path)).text()
      const tables = (body.match(/<table\b/g) ?? []).length
      const links = [...body.matchAll(/href="([^"]*format=csv[^"]*)"/g)].map((m) => m[1]!.replace(/&amp;/g, '&'))
      expect(links.length, path).toBeGreaterThanOrEqual(tables)
      for (const link of links) {
        const res = await t.app.request(link)
        expect(res.status, link).toBe(200)
        expect(res.headers.get('content-type'), link).toMatch(/^text\/csv/)
      }
    }
  })

  it('every page names its JSON twin, and the twin answers', async () => {
    for (const path of ['/', '/skills/kubernetes', '/courses', '/reskilling', '/taxonomy', '/sources']) {
      const body = await (await t.app.request(path)).text()
      const twin = /This page as data: <a href="([^"]+)"/.exec(body)?.[1]?.replace(/&amp;/g, '&')
      expect(twin, path).toMatch(/^\/api\//)
      const res = await t.app.request(twin!)
      expect(res.status).toBe(200)
      expect(res.headers.get('content-type')).toMatch(/^application\/json/)
    }
  })

  it('the overview shows counts per state, trend lines and state words with shapes', async () => {
    const body = await (await t.app.request('/')).text()
    expect(body).toMatch(/<svg class="spark" role="img" aria-label="Kubernetes: share of postings from/)
    expect(body).toMatch(/<span aria-hidden="true">▲<\/span> rising<\/span> <strong>3<\/strong>/)
    expect(body).toContain('Last run:')
    expect(body).toContain('Next scheduled:')
  })

  it('the overview lists next runs from the scheduler', async () => {
    const { createApp } = await import('../../src/server/app.ts')
    const app = createApp(t.db, t.config, { nextRuns: () => [{ name: 'ingest:fernhollow-board', next: '2025-02-01T10:00:00.000Z' }] })
    const body = await (await app.request('/')).text()
    expect(body).toContain('ingest:fernhollow-board: 2025-02-01 10:00 UTC')
  })

  it('the skill page carries the chart box, plain-word results and example postings', async () => {
    const body = await (await t.app.request('/skills/cobol')).text()
    expect(body).toContain('id="demand-chart"')
    expect(body).toContain('data-src="/api/skills/cobol/series"')
    expect(body).toContain('/assets/vendor/uPlot.iife.min.js')
    expect(body).toContain('demand halves about every')
    expect(body).toContain('changed course around')
    expect(body).toMatch(/<h3 class="posting-title">/)
  })
})

describe('JSON and CSV API', () => {
  it.each(JSON_ROUTES)('%s answers JSON', async (path) => {
    const res = await t.app.request(path)
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toMatch(/^application\/json/)
    expect(res.headers.get('cache-control')).toBe('no-store')
    await res.json()
  })

  it.each(CSV_ROUTES)('%s?format=csv answers CSV with a header row', async (path) => {
    const res = await t.app.request(`${path}${path.includes('?') ? '&' : '?'}format=csv`)
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toBe('text/csv; charset=utf-8')
    expect(res.headers.get('content-disposition')).toMatch(/^attachment; filename="[\w.-]+\.csv"$/)
    const rows = parse(await res.text(), { columns: true }) as Record<string, string>[]
    expect(Array.isArray(rows)).toBe(true)
  })

  it('the skill JSON carries the chart series aligned by month, with forecast bands after the data', async () => {
    const d = (await (await t.app.request('/api/skills/kubernetes')).json()) as {
      chart: { months: string[]; external: (number | null)[]; forecast: (number | null)[]; lo80: (number | null)[]; hi95: (number | null)[] }
      words: string[]
    }
    const { months, external, forecast, lo80, hi95 } = d.chart
    expect(months.length).toBe(36)
    expect(external.length).toBe(36)
    expect(external.slice(0, 24).every((v) => v !== null)).toBe(true)
    expect(forecast.slice(24).every((v) => v !== null)).toBe(true)
    for (let i = 24; i < 36; i++) expect(lo80[i]!).toBeLessThan(hi95[i]!)
    expect(d.words.join(' ')).toMatch(/grows by about \+35\.0% a year \(95% interval \+25\.0% to \+45\.0%\)/)
  })

  it('suggests skills for the altLabel field by id or label, prefix matches first, wildcards literal', async () => {
    const get = async (qs: string) => (await (await t.app.request(`/api/concepts?${qs}`)).json()) as { id: string; label: string }[]
    expect(await get('q=kube')).toEqual([{ id: 'kubernetes', label: 'Kubernetes' }])
    expect((await get('q=man'))[0]!.id).toBe('stakeholder-management')
    expect(await get('q=%25')).toEqual([])
    expect((await get('limit=3')).length).toBe(3)
  })

  it('the overview CSV has every matching row, not one page', async () => {
    const rows = parse(await (await t.app.request('/api/overview?format=csv&size=2')).text(), { columns: true }) as Record<string, string>[]
    expect(rows.length).toBe(8)
    expect(Object.keys(rows[0]!)).toEqual(expect.arrayContaining(['rank', 'id', 'state', 'momentum_contribution', 'gap_value', 'coverage']))
  })
})

describe('overview sorting, filtering and paging', () => {
  const ids = async (qs: string) => ((await (await t.app.request(`/api/overview?${qs}`)).json()) as { rows: { id: string }[] }).rows.map((r) => r.id)

  it('sorts by rank by default and by any column both ways', async () => {
    const byRank = (await (await t.app.request('/api/overview')).json()) as { rows: { rank: number }[] }
    expect(byRank.rows.map((r) => r.rank)).toEqual([1, 2, 3, 4, 5, 6, 7, 8])
    const asc = await ids('sort=label&dir=asc')
    const labels = ((await (await t.app.request('/api/overview?sort=label&dir=asc')).json()) as { rows: { label: string }[] }).rows.map((r) => r.label.toLowerCase())
    expect(labels).toEqual([...labels].sort())
    expect(asc[0]).toBe('adobe-flash')
    expect(await ids('sort=label&dir=desc')).toEqual([...asc].reverse())
    const growth = (await (await t.app.request('/api/overview?sort=growth&dir=desc')).json()) as { rows: { annualGrowth: number }[] }
    const g = growth.rows.map((r) => r.annualGrowth)
    expect(g).toEqual([...g].sort((a, b) => b - a))
  })

  it('puts skills without a half-life last in both directions', async () => {
    const asc = await ids('sort=halflife&dir=asc')
    const desc = await ids('sort=halflife&dir=desc')
    expect(asc.slice(0, 2)).toEqual(['adobe-flash', 'cobol'])
    expect(desc.slice(0, 2)).toEqual(['cobol', 'adobe-flash'])
  })

  it('filters by role, team, skill type, state and text', async () => {
    expect((await ids('role=Data%20steward')).sort()).toEqual(['kubernetes', 'python'])
    expect((await ids('team=Infrastructure')).sort()).toEqual(['cobol', 'kubernetes', 'terraform'])
    expect((await ids('type=soft')).sort()).toEqual(['negotiation', 'stakeholder-management'])
    expect(await ids('state=fading')).toEqual(['adobe-flash'])
    expect(await ids('q=kube')).toEqual(['kubernetes'])
    expect(await ids('q=%25')).toEqual([]) // a LIKE wildcard is searched for literally
  })

  it('pages with bounded sizes and reports the total', async () => {
    const d = (await (await t.app.request('/api/overview?size=3&page=2')).json()) as { total: number; pages: number; rows: { rank: number }[] }
    expect(d.total).toBe(8)
    expect(d.pages).toBe(3)
    expect(d.rows.map((r) => r.rank)).toEqual([4, 5, 6])
    const body = await (await t.app.request('/?size=3&page=2')).text()
    expect(body).toContain('rel="prev"')
    expect(body).toContain('rel="next"')
    const silly = (await (await t.app.request('/api/overview?size=99999&page=-4&sort=nonsense&dir=up')).json()) as { query: { pageSize: number; page: number; sort: string } }
    expect(silly.query).toMatchObject({ pageSize: 200, page: 1, sort: 'rank' })
  })

  it('marks the sorted column for assistive technology', async () => {
    const body = await (await t.app.request('/?sort=growth&dir=desc')).text()
    expect(body).toMatch(/<th scope="col" class="num" aria-sort="descending"><a href="[^"]*sort=growth&amp;dir=asc/)
  })

  it('sorts by coverage on the figures as displayed (hidden ones last)', async () => {
    const rows = ((await (await t.app.request('/api/overview?sort=coverage&dir=desc')).json()) as { rows: { id: string; coverage: { coverage: number | null } | null }[] }).rows
    const shown = rows.filter((r) => r.coverage?.coverage != null).map((r) => r.coverage!.coverage!)
    expect(shown.length).toBeGreaterThan(0)
    expect(shown).toEqual([...shown].sort((a, b) => b - a))
    const firstHidden = rows.findIndex((r) => r.coverage?.coverage == null)
    expect(rows.slice(firstHidden).every((r) => r.coverage?.coverage == null)).toBe(true)
  })
})

describe('not found', () => {
  it.each([
    ['/skills/no-such-skill', 404, /text\/html/],
    ['/no/such/page', 404, /text\/html/],
    ['/api/no/such/route', 404, /application\/json/],
    ['/api/skills/no-such-skill', 404, /application\/json/],
    ['/api/skills/kubernetes/no-such-table', 404, /application\/json/],
    ['/api/reskilling/no-such-table', 404, /application\/json/],
    ['/assets/no-such-file.js', 404, /text\/plain/],
    ['/assets/vendor/other.js', 404, /text\/plain/],
    ['/feeds/..%2F..%2Fsecret.xml', 404, /text\/plain/],
  ])('%s -> %i', async (path, status, type) => {
    const res = await t.app.request(path)
    expect(res.status).toBe(status)
    expect(res.headers.get('content-type')).toMatch(type)
  })
})

describe('assets', () => {
  it('serves uPlot from the installed package with an ETag, and 304 on revalidation', async () => {
    const res = await t.app.request('/assets/vendor/uPlot.iife.min.js')
    expect(res.status).toBe(200)
    expect(res.headers.get('content-type')).toBe('text/javascript; charset=utf-8')
    const text = await res.text()
    expect(text).toContain('uPlot')
    const again = await t.app.request('/assets/vendor/uPlot.iife.min.js', { headers: { 'If-None-Match': res.headers.get('etag')! } })
    expect(again.status).toBe(304)
    expect((await t.app.request('/assets/style.css')).headers.get('content-type')).toBe('text/css; charset=utf-8')
    expect((await t.app.request('/assets/charts.js')).status).toBe(200)
  })
})

describe('an empty database', () => {
  it('renders every page with a hint at what to run, and empty JSON', async () => {
    const empty = makeApp({ fixture: false })
    const hints: Record<string, string> = {
      '/': 'No taxonomy loaded yet',
      '/courses': 'No courses imported yet',
      '/reskilling': 'The plan has not been computed yet',
      '/taxonomy': 'No candidate terms yet',
      '/sources': 'No sources configured or imported yet',
    }
    for (const [path, hint] of Object.entries(hints)) {
      const res = await empty.app.request(path)
      expect(res.status, path).toBe(200)
      expect(await res.text()).toContain(hint)
    }
    const o = (await (await empty.app.request('/api/overview')).json()) as { total: number; rows: unknown[] }
    expect(o).toMatchObject({ total: 0, rows: [] })
  })

  it('says "no curves yet" when the taxonomy exists but nothing was fitted', async () => {
    const bare = makeApp({ fixture: false })
    bare.db.prepare("INSERT INTO concepts(id, pref_label, type) VALUES ('sql', 'SQL', 'hard')").run()
    expect(await (await bare.app.request('/')).text()).toContain('No curves yet: run `tides run fit`.')
    expect(await (await bare.app.request('/skills/sql')).text()).toContain('No curve for this skill yet')
  })
})
