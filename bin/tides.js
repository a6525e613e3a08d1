#!/usr/bin/env node
// Entry point for `tides` / `npx tides`: runs the CLI in one child process, bundled (dist/, built by
// `npm install`) when the bundle is up to date, else the TypeScript sources under tsx's loader
// (through tsx's own CLI it took two processes: about 0.2 s more per command).
// A SIGTERM or SIGHUP sent to this process is passed on, so that a process manager stopping
// `tides serve` stops the server; Ctrl-C reaches the child from the terminal itself, and this
// process waits for it to finish.
import { spawn } from 'node:child_process'
import os from 'node:os'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { freshBundle } from './bundle.js'
import { TSX_LOADER_ARGS } from './tsx-loader.js'

// the bundled CLI when it is up to date (bin/bundle.js), else the sources under tsx's loader
const bundle = freshBundle('cli')
const cli = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'src', 'cli.ts')
const args = bundle ? [bundle] : [...TSX_LOADER_ARGS, cli]
const child = spawn(process.execPath, [...args, ...process.argv.slice(2)], { stdio: 'inherit' })
process.on('SIGINT', () => {})
for (const signal of ['SIGTERM', 'SIGHUP']) process.on(signal, () => child.kill(signal))
child.on('error', (err) => {
  process.stderr.write(`tides: could not start node: ${err.message}\n`)
  process.exit(1)
})
child.on('exit', (code, signal) => process.exit(code ?? (signal ? 128 + (os.constants.signals[signal] ?? 0) : 1)))
