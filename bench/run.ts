/**
 * `npm run bench`: runs every benchmark in its own process (so each peak RSS is its own), prints their
 * tables, and writes all figures to bench/results.json. Never part of `npm test`.
 * Usage: npm run bench [-- NAME...]   (names: the files in bench/ without .ts, e.g. limits map fit)
 */
import { spawnSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { fileURLToPath } from 'node:url'

const here = path.dirname(fileURLToPath(import.meta.url))
/** the order in which they run; files missing from this build are skipped */
const ORDER = ['limits', 'ingest', 'map', 'fit', 'ability', 'plan', 'pipeline', 'server']

const wanted = process.argv.slice(2)
const names = (wanted.length ? wanted : ORDER).filter((n) => fs.existsSync(path.join(here, `${n}.ts`)))
const tsx = path.join(here, '..', 'node_modules', 'tsx', 'dist', 'cli.mjs')
const results: unknown[] = []
const started = Date.now()
process.stdout.write(`skill-tides benchmarks on ${os.cpus().length} cores (${os.cpus()[0]?.model ?? 'unknown cpu'}), ${(os.totalmem() / 2 ** 30).toFixed(0)} GiB, node ${process.version}\n`)
for (const name of names) {
  const t0 = Date.now()
  const child = spawnSync(process.execPath, [tsx, path.join(here, `${name}.ts`)], { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024, stdio: ['ignore', 'pipe', 'inherit'] })
  for (const line of child.stdout.split('\n')) {
    if (line.startsWith('BENCH_JSON ')) results.push(JSON.parse(line.slice('BENCH_JSON '.length)))
    else if (line) process.stdout.write(line + '\n')
  }
  if (child.status !== 0) {
    process.stdout.write(`  ${name}: FAILED (exit ${child.status})\n`)
    results.push({ name, failed: true, exit: child.status })
  }
  process.stdout.write(`  [${name}: ${((Date.now() - t0) / 1000).toFixed(1)} s]\n`)
}
const out = path.join(here, 'results.json')
fs.writeFileSync(out, JSON.stringify({ at: new Date().toISOString(), cores: os.cpus().length, node: process.version, seconds: (Date.now() - started) / 1000, results }, null, 2) + '\n')
process.stdout.write(`\nwrote ${out}\n`)
