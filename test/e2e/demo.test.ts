/**
 * Browser test on a small demo database: the demo scenario (fictional Fernhollow Cooperative) is
 * generated and loaded through the real paths (feeds fetched over HTTP from the running server),
 * the pipeline runs, and the dashboard is used as a person would. The chart check needs the fit
 * stage; in a build without it that test is skipped (and says so).
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { parse } from 'csv-parse/sync'
import { chromium, type BrowserContext, type Page } from 'playwright-core'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { parseConfig, type Config } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { runDemo } from '../../src/demo/load.ts'
import { serve, type Running } from '../../src/serve.ts'
import { findStage } from '../../src/stages.ts'
import { TOKEN } from '../server/helpers.ts'

const CHROMIUM = '/usr/bin/chromium'
const OUT = path.resolve('test-output')
const HAS_FIT = findStage('fit') !== undefined

let tmp: string
let db: Db
let config: Config
let server: Running
let context: BrowserContext
let page: Page
const problems: string[] = []

beforeAll(async () => {
  if (!fs.existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} not found: install Debian's chromium (apt-get install -y chromium)`)
  fs.mkdirSync(OUT, { recursive: true })
  tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-e2e-demo-'))
  config = parseConfig({ dataDir: tmp, server: { host: '127.0.0.1', port: 0, token: TOKEN } })
  db = openDb(path.join(tmp, 'tides.db'))
  server = await serve(db, config, { schedules: false, signals: false, log: () => {} })
  await runDemo(db, config, { run: true, months: 24, perMonth: 150, people: 200, asOf: '2025-06-30', baseUrl: server.url, log: () => {} })
  context = await chromium.launchPersistentContext(path.join(tmp, 'profile'), {
    executablePath: CHROMIUM,
    headless: true,
    acceptDownloads: true,
    viewport: { width: 1280, height: 900 },
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  })
  page = context.pages()[0] ?? (await context.newPage())
  page.on('console', (m) => {
    if (m.type() === 'error') problems.push(m.text())
  })
  page.on('response', (r) => {
    if (r.status() >= 400) problems.push(`HTTP ${r.status()} for ${r.url()}`)
  })
  page.on('pageerror', (e) => problems.push(e.message))
})

afterAll(async () => {
  await context?.close()
  await server?.close()
  db?.close()
  if (tmp) fs.rmSync(tmp, { recursive: true, force: true })
})

describe('the demo in Chromium', () => {
  it('shows the demo skills on the overview, sorts them, and downloads all as CSV', async () => {
    await page.goto(server.url)
    const total = Number((db.prepare('SELECT COUNT(*) AS n FROM concepts').get() as { n: number }).n)
    expect(total).toBeGreaterThan(100)
    expect(await page.locator('table#needs tbody tr').count()).toBe(50)
    expect(await page.locator('.pager').textContent()).toContain(`${total} skills`)
    await page.screenshot({ path: path.join(OUT, 'demo-01-overview.png'), fullPage: true })
    await page.click('th a[data-sort="label"]')
    await page.waitForURL(/sort=label/)
    const labels = await page.locator('table#needs tbody tr td:nth-child(2) a').allTextContents()
    expect(labels).toEqual([...labels].sort((a, b) => a.toLowerCase().localeCompare(b.toLowerCase())))
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('text=Download all matching skills as CSV')])
    const rows = parse(fs.readFileSync((await download.path())!, 'utf8'), { columns: true }) as Record<string, string>[]
    expect(rows.length).toBe(total)
  })

  it.skipIf(!HAS_FIT)('opens the top skill with a curve and its chart draws', async () => {
    const top = db.prepare("SELECT p.key FROM plan_outputs p JOIN curves c ON c.concept_id = p.key WHERE p.kind = 'need' ORDER BY p.rank LIMIT 1").pluck().get() as string
    await page.goto(`${server.url}skills/${encodeURIComponent(top)}`)
    const chart = page.locator('#demand-chart')
    await expect.poll(() => chart.getAttribute('data-drawn'), { timeout: 15_000 }).not.toBeNull()
    expect(Number(await chart.getAttribute('data-drawn'))).toBeGreaterThan(12)
    expect(await page.locator('#demand-chart canvas').count()).toBeGreaterThan(0)
    await page.screenshot({ path: path.join(OUT, 'demo-02-skill.png'), fullPage: true })
  })

  it('accepts the top candidate term and the re-map follows', async () => {
    const term = db.prepare("SELECT term FROM candidate_terms WHERE status = 'open' ORDER BY score DESC LIMIT 1").pluck().get() as string | undefined
    expect(term, 'the demo produces candidate terms').toBeTruthy()
    await page.goto(`${server.url}login?next=/taxonomy`)
    await page.fill('#token', TOKEN)
    await Promise.all([page.waitForURL(/\/taxonomy$/), page.click('form.login button[type="submit"]')])
    const row = page.locator('table#candidates tbody tr').filter({ has: page.locator('strong.term', { hasText: term! }) })
    await Promise.all([page.waitForURL(/decided=1/), row.locator('button[data-action="new"]').click()])
    await expect.poll(() => page.locator('#progress li[data-step="re-map"] .step-status').textContent(), { timeout: 90_000, interval: 500 }).toMatch(/done/)
    await page.screenshot({ path: path.join(OUT, 'demo-03-term-accepted.png'), fullPage: true })
    expect(problems).toEqual([])
  })
})
