/**
 * Browser test of the dashboard: Debian's Chromium driven by playwright-core against the real server
 * on 127.0.0.1. Opens the overview, sorts (mouse and keyboard), opens a skill page and checks the
 * chart drew from data, accepts a candidate term, downloads a CSV, and checks that hostile posting
 * text stays text. Screenshots go to test-output/.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { parse } from 'csv-parse/sync'
import { chromium, type BrowserContext, type Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig, type Config } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { serve, type Running } from '../../src/serve.ts'
import { buildFixture } from '../server/fixture.ts'
import { TOKEN } from '../server/helpers.ts'
import { XSS_PAYLOADS } from '../server/xss-payloads.ts'

const CHROMIUM = '/usr/bin/chromium'
const OUT = path.resolve('test-output')
const HOSTILE = XSS_PAYLOADS.slice(0, 6).map((p) => ({ title: p, body: `Hiring now. ${p} Apply today.` }))

let tmp: string
let db: Db
let config: Config
let server: Running
let context: BrowserContext
let page: Page
const problems: string[] = []
const dialogs: string[] = []
const serverLog: string[] = []

async function shot(name: string): Promise<void> {
  await page.screenshot({ path: path.join(OUT, `${name}.png`), fullPage: true })
}

beforeAll(async () => {
  if (!fs.existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} not found: install Debian's chromium (apt-get install -y chromium)`)
  fs.mkdirSync(OUT, { recursive: true })
  tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-e2e-'))
  config = parseConfig({ dataDir: tmp, server: { host: '127.0.0.1', port: 0, token: TOKEN } })
  db = openDb(path.join(tmp, 'tides.db'))
  // the demo loader needs the map and fit stages to produce curves; until every stage is built the
  // test runs on the deterministic fixture, which goes through the real plan stage
  buildFixture(db, { config, hostilePostings: HOSTILE })
  server = await serve(db, config, { schedules: false, signals: false, log: (m) => serverLog.push(m) })
  context = await chromium.launchPersistentContext(path.join(tmp, 'profile'), {
    executablePath: CHROMIUM,
    headless: true,
    acceptDownloads: true,
    viewport: { width: 1280, height: 900 },
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  })
  page = context.pages()[0] ?? (await context.newPage())
  page.on('console', (m) => {
    if (m.type() === 'error' || m.type() === 'warning') problems.push(`${m.type()}: ${m.text()}`)
  })
  page.on('response', (r) => {
    if (r.status() >= 400) problems.push(`HTTP ${r.status()} for ${r.url()}`)
  })
  page.on('pageerror', (e) => problems.push(`pageerror: ${e.message}`))
  page.on('dialog', (d) => {
    dialogs.push(d.message())
    void d.dismiss()
  })
  // nothing may leave loopback (no CDN, no fonts): fail any request to another host
  await context.route('**/*', (route) => {
    const url = new URL(route.request().url())
    if (url.hostname !== '127.0.0.1') {
      problems.push(`off-host request: ${url.href}`)
      return route.abort()
    }
    return route.continue()
  })
})

afterAll(async () => {
  await context?.close()
  await server?.close()
  db?.close()
  if (tmp) fs.rmSync(tmp, { recursive: true, force: true })
})

describe('dashboard in Chromium', () => {
  it('opens the overview with trend lines, states and counts', async () => {
    await page.goto(server.url)
    await expect.poll(() => page.title()).toBe('Needs overview · skill-tides')
    const rows = page.locator('table#needs tbody tr')
    expect(await rows.count()).toBe(8)
    expect(await page.locator('table#needs svg.spark polyline').count()).toBe(8)
    expect(await page.locator('.state-counts li').count()).toBeGreaterThanOrEqual(5)
    await shot('01-overview')
  })

  it('sorts by clicking a column header, and by keyboard', async () => {
    await page.click('th a[data-sort="label"]')
    await page.waitForURL(/sort=label&dir=asc/)
    const labels = await page.locator('table#needs tbody tr td:nth-child(2) a').allTextContents()
    expect(labels).toEqual([...labels].sort((a, b) => a.toLowerCase().localeCompare(b.toLowerCase())))
    expect(await page.getAttribute('th[aria-sort]', 'aria-sort')).toBe('ascending')
    await page.focus('th a[data-sort="label"]')
    await page.keyboard.press('Enter')
    await page.waitForURL(/sort=label&dir=desc/)
    const desc = await page.locator('table#needs tbody tr td:nth-child(2) a').allTextContents()
    expect(desc).toEqual([...labels].reverse())
    await shot('02-overview-sorted')
  })

  it('opens a skill page and the chart draws from the data', async () => {
    await page.goto(server.url)
    await page.click('table#needs tbody tr:first-child td:nth-child(2) a')
    await page.waitForURL(/\/skills\/kubernetes$/)
    const chart = page.locator('#demand-chart')
    await expect.poll(() => chart.getAttribute('data-drawn'), { timeout: 15_000 }).not.toBeNull()
    expect(Number(await chart.getAttribute('data-drawn'))).toBe(48) // 24 external + 24 internal monthly shares
    // the canvas has ink on it: count non-transparent pixels
    // (a string, so this Node-side file needs no DOM typings)
    const inked = (await page.evaluate(`(() => {
      const canvas = document.querySelector('#demand-chart canvas')
      if (!canvas) return -1
      const data = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data
      let n = 0
      for (let i = 3; i < data.length; i += 4) if (data[i] > 0) n++
      return n
    })()`)) as number
    expect(inked).toBeGreaterThan(2000)
    expect(await page.locator('#demand-chart .u-legend').textContent()).toContain('Forecast')
    await shot('03-skill-kubernetes')
  })

  it('shows hostile posting text as text, and no script runs', async () => {
    const titles = await page.locator('.posting-title').allTextContents()
    expect(titles.some((t) => HOSTILE.some((h) => h.title === t))).toBe(true)
    expect(await page.locator('.postings img, .postings script, .postings svg, .postings iframe').count()).toBe(0)
    expect(dialogs).toEqual([])
  })

  it('draws the reskilling forecast and switches skills', async () => {
    await page.goto(`${server.url}reskilling`)
    const chart = page.locator('#reskilling-chart')
    await expect.poll(() => chart.getAttribute('data-drawn'), { timeout: 15_000 }).toBe('8')
    const first = await chart.getAttribute('data-skill')
    await page.selectOption('.chart-choice select', '1')
    await expect.poll(() => chart.getAttribute('data-skill')).not.toBe(first)
    await shot('06-reskilling')
  })

  it('downloads the overview as CSV', async () => {
    await page.goto(server.url)
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('text=Download all matching skills as CSV')])
    expect(download.suggestedFilename()).toBe('skill-needs.csv')
    const text = fs.readFileSync((await download.path())!, 'utf8')
    const rows = parse(text, { columns: true }) as Record<string, string>[]
    expect(rows.length).toBe(8)
    expect(rows[0]).toMatchObject({ rank: '1', id: 'kubernetes' })
  })

  // last: the change starts the real pipeline (map, fit, plan) over the fixture's few documents
  it('signs in, accepts a candidate term, and follows the re-map and refit it starts', async () => {
    await page.goto(`${server.url}login?next=/taxonomy`)
    await page.fill('#token', TOKEN)
    await Promise.all([page.waitForURL(/\/taxonomy$/), page.click('form.login button[type="submit"]')])
    const row = page.locator('table#candidates tbody tr', { hasText: 'agent orchestration' })
    await shot('04-term-review')
    await Promise.all([page.waitForURL(/decided=1/), row.locator('button[data-action="new"]').click()])
    expect(await page.locator('.notice-ok').textContent()).toContain('Decision saved')
    expect(await page.locator('table#candidates tbody tr', { hasText: 'agent orchestration' }).count()).toBe(0)
    // the server runs the map stage after the change (the taxonomy.changed event); the page polls
    // the progress JSON and shows the step done without a reload
    const remap = page.locator('#progress li[data-step="re-map"] .step-status')
    await expect.poll(() => remap.textContent(), { timeout: 60_000, interval: 500 }).toMatch(/done/)
    expect(serverLog.some((m) => /after a dashboard change: map /.test(m))).toBe(true)
    const refit = page.locator('#progress li[data-step="refit"] .step-status')
    await expect.poll(() => refit.textContent(), { timeout: 90_000, interval: 500 }).toMatch(/done/)
    const accepted = (await (await page.request.get(`${server.url}api/taxonomy?status=accepted`)).json()) as { candidates: { term: string }[] }
    expect(accepted.candidates.map((c) => c.term)).toEqual(['agent orchestration'])
    await shot('05-term-accepted')
  })

  it('ran without console errors, CSP violations or off-host requests', () => {
    expect(problems).toEqual([])
    expect(dialogs).toEqual([])
  })
})
