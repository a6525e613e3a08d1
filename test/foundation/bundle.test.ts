/**
 * The bundled CLI (scripts/build.ts, dist/ after `npm install`) must behave as the TypeScript
 * sources do: same results with the worker threads it starts (the import's parse worker, the map's
 * workers), the same matcher cache key and fit code key, and the dashboard's files found from its own directory.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest'
import { spawn, spawnSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import Database from 'better-sqlite3'
import { freshBundle } from '../../bin/bundle.js'
import { TSX_LOADER_ARGS } from '../../bin/tsx-loader.js'
import { rng, randomText, toJsonLines } from '../ingest/corpus.ts'

const ROOT = path.resolve(__dirname, '../..')
// inside the project (git-ignored), as a bundle finds the project's root above its own directory
const OUT = path.join(ROOT, 'test-output', `bundle-${process.pid}`)
const SOURCES = [...TSX_LOADER_ARGS, path.join(ROOT, 'src', 'cli.ts')]
const BUNDLE = [path.join(OUT, 'cli.mjs')]

function tides(cli: string[], cwd: string, ...args: string[]): { code: number | null; out: string; err: string } {
  const r = spawnSync(process.execPath, [...cli, '--config', path.join(cwd, 'tides.config.json'), ...args], { cwd, encoding: 'utf8', maxBuffer: 256 * 2 ** 20, env: { ...process.env, NO_COLOR: '1' } })
  return { code: r.status, out: r.stdout, err: r.stderr }
}

/** 600 postings over 24 months naming skills of the shipped taxonomy, one rising and one fading. */
function postings(): string {
  const rand = rng(11)
  const lines = Array.from({ length: 600 }, (_, i) => {
    const month = Math.floor(i / 25)
    const skills = ['SQL', rand() < month / 24 ? 'Kubernetes' : '', rand() < 1 - month / 24 ? 'COBOL' : '', rand() < 0.3 ? 'Python' : ''].filter(Boolean)
    const date = `${2023 + Math.floor(month / 12)}-${String((month % 12) + 1).padStart(2, '0')}-12`
    return { identifier: `b-${i}`, title: 'Cooperative role', description: `${randomText(rand, 60)} Skills: ${skills.join(', ')}.`, datePosted: date }
  })
  return toJsonLines(lines)
}

beforeAll(() => {
  const built = spawnSync(process.execPath, [...TSX_LOADER_ARGS, path.join(ROOT, 'scripts', 'build.ts'), '--outdir', OUT], { cwd: ROOT, encoding: 'utf8' })
  expect(built.status, built.stderr).toBe(0)
}, 60_000)

afterAll(() => fs.rmSync(OUT, { recursive: true, force: true }))

describe('bin/bundle.js chooses the bundle only while it is up to date', () => {
  it('is null without a bundle, with a source file newer than it, or with TIDES_NO_BUNDLE=1', () => {
    const root = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-fresh-'))
    fs.mkdirSync(path.join(root, 'src', 'deep'), { recursive: true })
    fs.mkdirSync(path.join(root, 'dist'))
    const source = path.join(root, 'src', 'deep', 'a.ts')
    const bundle = path.join(root, 'dist', 'cli.mjs')
    fs.writeFileSync(source, '')
    expect(freshBundle('cli', root)).toBeNull()
    fs.writeFileSync(bundle, '')
    fs.utimesSync(source, new Date(1_000_000), new Date(1_000_000))
    expect(freshBundle('cli', root)).toBe(bundle)
    fs.utimesSync(source, new Date(), new Date(Date.now() + 60_000))
    expect(freshBundle('cli', root)).toBeNull()
    fs.utimesSync(source, new Date(1_000_000), new Date(1_000_000))
    process.env['TIDES_NO_BUNDLE'] = '1'
    try {
      expect(freshBundle('cli', root)).toBeNull()
    } finally {
      delete process.env['TIDES_NO_BUNDLE']
    }
    fs.rmSync(root, { recursive: true, force: true })
  })
})

describe('the bundled CLI', () => {
  it('builds one module for the CLI and one for each worker thread', () => {
    expect(fs.readdirSync(OUT).sort()).toEqual(['candidate-worker.mjs', 'cli.mjs', 'map-worker.mjs', 'parse-worker.mjs'])
  })

  it('runs the pipeline on its worker threads with the same results and matcher cache key as the sources', () => {
    const file = path.join(os.tmpdir(), `tides-bundle-${process.pid}.jsonl`)
    fs.writeFileSync(file, postings())
    const results = [SOURCES, BUNDLE].map((cli) => {
      const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-bundle-'))
      // the postings read as a source by the ingest stage on its parse worker, then mapped on two worker threads
      const config = { db: 't.db', sources: [{ id: 'p', kind: 'jsonl', location: file }], taxonomy: { workerThreshold: 1, workers: 2 }, ingest: { parseWorkerMinBytes: 0 } }
      fs.writeFileSync(path.join(dir, 'tides.config.json'), JSON.stringify(config))
      const run = tides(cli, dir, 'run', 'all')
      expect(run.code, run.err).toBe(0)
      expect(run.err).toMatch(/over 2 worker threads/)
      const skills = tides(cli, dir, 'report', 'skills', '--json')
      expect(skills.code, skills.err).toBe(0)
      const db = new Database(path.join(dir, 't.db'), { readonly: true })
      const parsed = db.prepare("SELECT details_json FROM job_runs WHERE details_json LIKE '%parseWorker%'").pluck().all().map((d) => JSON.parse(d as string).parseWorker)
      const code = db.prepare('SELECT code FROM matcher_cache').pluck().all()
      // the fit's mark carries the hash of its code: the bundle's key is the one of the sources it was built from
      const fitMark = db.prepare("SELECT config_hash FROM stage_marks WHERE stage = 'fit'").pluck().all()
      db.close()
      fs.rmSync(dir, { recursive: true, force: true })
      // everything but the moment of the fit
      const reported = JSON.parse(skills.out, (key, value: unknown) => (key === 'fittedAt' ? undefined : value)) as { state: string }[]
      return { reported, parsed, code, fitMark }
    })
    fs.rmSync(file, { force: true })
    expect(results[0]!.parsed).toEqual([true])
    expect(results[0]!.reported.some((s) => s.state !== 'insufficient-evidence')).toBe(true)
    expect(results[1]).toEqual(results[0])
    expect(results[1]!.code).toHaveLength(1)
    expect(results[1]!.fitMark).toHaveLength(1)
  }, 120_000)

  it('serves the dashboard with its own files and uPlot', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-bundle-'))
    fs.writeFileSync(path.join(dir, 'tides.config.json'), JSON.stringify({ db: 't.db' }))
    const server = spawn(process.execPath, [...BUNDLE, '--config', path.join(dir, 'tides.config.json'), 'serve', '--port', '0', '--no-schedules'], { cwd: dir, stdio: ['ignore', 'pipe', 'pipe'] })
    try {
      let err = ''
      const url = await new Promise<string>((resolve, reject) => {
        server.stderr.on('data', (chunk: Buffer) => {
          err += chunk.toString()
          const found = /dashboard: (http:\/\/\S+)/.exec(err)
          if (found) resolve(found[1]!)
        })
        server.once('exit', () => reject(new Error(`the bundle exited before serving: ${err}`)))
      })
      const page = await fetch(url)
      expect(page.status).toBe(200)
      const assets = [...(await page.text()).matchAll(/(?:href|src)="(\/[^"]+\.(?:css|js))"/g)].map((m) => m[1]!)
      expect(assets.length).toBeGreaterThan(0)
      for (const asset of assets) expect((await fetch(new URL(asset, url))).status, asset).toBe(200)
    } finally {
      server.kill('SIGTERM')
      fs.rmSync(dir, { recursive: true, force: true })
    }
  }, 60_000)
})
