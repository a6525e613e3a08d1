#!/usr/bin/env node
// Entry point for `tides` / `npx tides`: runs the CLI in one child process, bundled (dist/, built by
// `npm install`) when the bundle is up to date, else the TypeScript sources under tsx's loader
// (through tsx's own CLI it took two processes: about 0.2 s more per command).
// A SIGTERM or SIGHUP sent to this process is passed on, so that a process manager stopping
// `tides serve` stops the server; Ctrl-C reaches the child from the terminal itself, and this
// process waits for it to finish.
import { spawn } from 'node:child_process'
import os from 'node:os'
import { cliArgs } from './bundle.js'

const child = spawn(process.execPath, [...cliArgs(), ...process.argv.slice(2)], { stdio: 'inherit' })
process.on('SIGINT', () => {})
for (const signal of ['SIGTERM', 'SIGHUP']) process.on(signal, () => child.kill(signal))
child.on('error', (err) => {
  process.stderr.write(`tides: could not start node: ${err.message}\n`)
  process.exit(1)
})
child.on('exit', (code, signal) => process.exit(code ?? (signal ? 128 + (os.constants.signals[signal] ?? 0) : 1)))
