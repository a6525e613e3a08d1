/**
 * @module server/assets
 * Serves the dashboard's own CSS and scripts (dashboard/) and uPlot from its installed package, so
 * the dashboard works offline and under a same-origin CSP. Files are read once at start, served with
 * an ETag and revalidated by the browser.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import { createRequire } from 'node:module'
import path from 'node:path'
import type { Hono } from 'hono'
import type { Env } from './deps.ts'
import { PROJECT_ROOT } from '../util/build.ts'

interface Asset {
  body: Buffer
  type: string
  etag: string
}

export const DASHBOARD_DIR = path.join(PROJECT_ROOT, 'dashboard')

const TYPES: Record<string, string> = { '.css': 'text/css; charset=utf-8', '.js': 'text/javascript; charset=utf-8', '.svg': 'image/svg+xml' }

function load(file: string): Asset {
  const body = fs.readFileSync(file)
  return { body, type: TYPES[path.extname(file)] ?? 'application/octet-stream', etag: `"${crypto.createHash('sha1').update(body).digest('hex').slice(0, 20)}"` }
}

/** The uPlot files this dashboard uses, from node_modules. */
export function vendorFiles(): Record<string, string> {
  const require = createRequire(import.meta.url)
  const dist = path.join(path.dirname(require.resolve('uplot/package.json')), 'dist')
  return { 'uPlot.iife.min.js': path.join(dist, 'uPlot.iife.min.js'), 'uPlot.min.css': path.join(dist, 'uPlot.min.css') }
}

/** Loads every asset; throws at start (not on a request) when a file is missing. */
export function loadAssets(dir = DASHBOARD_DIR): Map<string, Asset> {
  const assets = new Map<string, Asset>()
  for (const name of fs.readdirSync(dir)) {
    if (/^[\w.-]+\.(css|js|svg)$/.test(name)) assets.set(name, load(path.join(dir, name)))
  }
  for (const [name, file] of Object.entries(vendorFiles())) assets.set(`vendor/${name}`, load(file))
  return assets
}

export function mountAssets(app: Hono<Env>, assets = loadAssets()): void {
  const serve = (name: string, ifNoneMatch: string | undefined) => {
    const a = assets.get(name)
    if (!a) return null
    const headers = { 'Content-Type': a.type, ETag: a.etag, 'Cache-Control': 'no-cache' }
    if (ifNoneMatch === a.etag) return new Response(null, { status: 304, headers })
    return new Response(new Uint8Array(a.body), { status: 200, headers })
  }
  app.get('/assets/vendor/:name', (c) => serve(`vendor/${c.req.param('name')}`, c.req.header('if-none-match')) ?? c.text('not found', 404))
  app.get('/assets/:name', (c) => serve(c.req.param('name'), c.req.header('if-none-match')) ?? c.text('not found', 404))
}
