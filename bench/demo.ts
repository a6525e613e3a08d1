/**
 * Demo scenario benchmark: generating the default demo (about 72,000 postings over 36 months, their
 * feeds and JSON Lines, requests, people, item banks, responses, courses; goal < 5 s) and loading its
 * CSV kinds through the real importers, which `npm start` does before the pipeline runs.
 * Standalone: `npx tsx bench/demo.ts` (or `npm run bench -- demo`).
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { parseConfig } from '../src/config.ts'
import { openDb } from '../src/db/connection.ts'
import { demoMonths } from '../src/demo/calendar.ts'
import { DEFAULT_PARAMS, generateDemo, type DemoManifest } from '../src/demo/generate.ts'
import { importDemoTables } from '../src/demo/load.ts'
import { generatePostings } from '../src/demo/postings.ts'
import { reportBench, type Figure } from './report.ts'

let lastCpu = 0
async function seconds(fn: () => unknown): Promise<number> {
  const cpu0 = process.cpuUsage()
  const t0 = performance.now()
  await fn()
  const cpu = process.cpuUsage(cpu0)
  lastCpu = (cpu.user + cpu.system) / 1e6
  return (performance.now() - t0) / 1000
}

function folderBytes(dir: string): number {
  let total = 0
  for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
    const full = path.join(dir, e.name)
    total += e.isDirectory() ? folderBytes(full) : fs.statSync(full).size
  }
  return total
}

const figures: Figure[] = []
const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-bench-demo-'))
try {
  const params = { ...DEFAULT_PARAMS, asOf: '2025-06-15' }
  // the skill draws alone (no text), for context
  const draws = await seconds(() => generatePostings({ seed: params.seed, months: demoMonths(params.asOf, params.months), perMonth: params.perMonth, countsOnly: true }, () => {}))
  figures.push({ figure: 'postings: roles and skill draws only', value: draws, unit: 's' })

  let manifest: DemoManifest | undefined
  let postingsSeconds = 0
  const total = await seconds(() => {
    manifest = generateDemo(dataDir, params, (m) => {
      const s = /postings and .* \(([\d.]+) s\)$/.exec(m)
      if (s) postingsSeconds = Number(s[1])
    })
  })
  const m = manifest!
  figures.push({ figure: `postings written (${m.counts.postings + m.counts.reposts} with reposts)`, value: postingsSeconds, unit: 's', goal: '< 5 s', met: postingsSeconds < 5 })
  figures.push({ figure: 'whole demo generated', value: total, unit: 's' })
  figures.push({ figure: '  of which CPU time', value: lastCpu, unit: 's' })
  figures.push({ figure: 'files written', value: folderBytes(dataDir) / 2 ** 20, unit: 'MiB' })
  figures.push({ figure: 'simulated responses', value: m.counts.responses, unit: '' })

  const db = openDb(':memory:')
  const load = await seconds(() => importDemoTables(db, parseConfig({ dataDir }), m, () => {}))
  db.close()
  figures.push({ figure: 'CSV kinds imported (people ... courses)', value: load, unit: 's' })
} finally {
  fs.rmSync(dataDir, { recursive: true, force: true })
}
reportBench('demo scenario', figures)
