/**
 * @module server/app
 * The hono application: dashboard pages, JSON/CSV API, the feed files of the demo.
 */
import { Hono } from 'hono'
import { html } from 'hono/html'
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { latestRuns } from '../db/runs.ts'
import { mountFeeds } from './feeds.ts'

export interface AppOptions {
  /** next scheduled runs, for the overview */
  nextRuns?: () => { name: string; next: string | null }[]
}

export function createApp(db: Db, config: Config, options: AppOptions = {}): Hono {
  const app = new Hono()
  mountFeeds(app, config.dataDir)
  app.get('/healthz', (c) => c.json({ ok: true }))
  app.get('/api/runs', (c) => c.json(latestRuns(db)))
  app.get('/', (c) => {
    const runs = latestRuns(db)
    return c.html(html`<!doctype html>
      <html lang="en">
        <head><meta charset="utf-8" /><title>skill-tides</title></head>
        <body>
          <h1>skill-tides</h1>
          <p>Estimates with uncertainty; a human decides. Personal data: follow local privacy and employment law.</p>
          <table>
            <thead><tr><th>stage</th><th>source</th><th>status</th><th>new</th><th>ended</th></tr></thead>
            <tbody>${runs.map((r) => html`<tr><td>${r.stage}</td><td>${r.source_id ?? ''}</td><td>${r.status}</td><td>${r.new}</td><td>${r.ended_at ?? ''}</td></tr>`)}</tbody>
          </table>
          <p>Next runs: ${(options.nextRuns?.() ?? []).map((n) => `${n.name} ${n.next ?? '-'}`).join('; ')}</p>
        </body>
      </html>`)
  })
  return app
}
