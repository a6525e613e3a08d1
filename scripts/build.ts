/**
 * Bundles the CLI and the worker threads' entry modules into dist/ (one ES module
 * each, packages left in node_modules), so that `tides` commands start without compiling
 * TypeScript on the fly: a command's process start measured 0.77 -> 0.40 s (DEVELOPERS.md, Scale).
 * Run by `npm install` (the `prepare` script) and `npm run build`; bin/tides.js uses dist/ only while
 * it is newer than every file under src/, and the sources under tsx otherwise.
 *
 * Usage: tsx scripts/build.ts [--outdir DIR]
 */
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { build } from 'esbuild'
import { fitSourceKey } from '../src/curves/source-key.ts'
import { matcherSourceKey } from '../src/taxonomy/matcher-cache.ts'
import type { BuildFacts } from '../src/util/build.ts'

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..')
const at = process.argv.indexOf('--outdir')
const outdir = at > 0 && process.argv[at + 1] ? path.resolve(process.argv[at + 1]!) : path.join(root, 'dist')

/** Entry modules: the worker files keep their names, which util/ts-worker.ts maps to from *.ts. */
export const ENTRIES: Record<string, string> = {
  cli: 'src/cli.ts',
  'parse-worker': 'src/ingest/parse-worker.ts',
  'map-worker': 'src/taxonomy/map-worker.ts',
  'candidate-worker': 'src/taxonomy/candidate-worker.ts',
}

const facts: BuildFacts = { matcherSourceKey: matcherSourceKey(), fitSourceKey: fitSourceKey() }
const started = performance.now()
await build({
  entryPoints: Object.fromEntries(Object.entries(ENTRIES).map(([name, file]) => [name, path.join(root, file)])),
  outdir,
  outExtension: { '.js': '.mjs' },
  bundle: true,
  platform: 'node',
  format: 'esm',
  target: 'node20',
  packages: 'external',
  define: { __TIDES_BUILD__: JSON.stringify(facts) },
  logLevel: 'warning',
})
process.stdout.write(`built ${Object.keys(ENTRIES).length} entry modules into ${path.relative(process.cwd(), outdir) || '.'} in ${((performance.now() - started) / 1000).toFixed(1)} s\n`)
