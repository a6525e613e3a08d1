/**
 * @module util/ts-worker
 * Worker threads that run this project's TypeScript modules.
 */
import os from 'node:os'
import path from 'node:path'
import { Worker } from 'node:worker_threads'
import { BUILD } from './build.ts'

/**
 * Starts a worker thread on a TypeScript module (`module`, a file URL). Hooks given by `--import`
 * in a worker's execArgv do not reach its entry module on Node 20, so a small bootstrap registers
 * tsx in the worker first and then imports the module.
 *
 * @example
 * ```ts
 * const worker = startTsWorker(new URL('./fit-worker.ts', import.meta.url), { config })
 * ```
 */
export function startTsWorker(module: URL, workerData: unknown): Worker {
  // the bundled CLI (dist/) has each worker entry bundled beside it under the same name (scripts/build.ts)
  if (BUILD) return new Worker(new URL(`./${path.basename(module.pathname, '.ts')}.mjs`, import.meta.url), { workerData })
  const api = import.meta.resolve('tsx/esm/api')
  const bootstrap = `import(${JSON.stringify(api)}).then((m) => { m.register(); return import(${JSON.stringify(module.href)}) })`
  return new Worker(bootstrap, { eval: true, workerData })
}

/** Default thread count: one per core, at most 8, at least 1. */
export function defaultThreads(): number {
  return Math.max(1, Math.min(8, os.availableParallelism?.() ?? os.cpus().length))
}
