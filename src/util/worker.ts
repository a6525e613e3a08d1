/**
 * @module util/worker
 * Worker threads on the program's TypeScript modules, and the one-thread-per-core default.
 */
import os from 'node:os'
import { Worker, type ResourceLimits } from 'node:worker_threads'

/**
 * Starts a worker thread on a TypeScript module (an absolute file URL, e.g.
 * `new URL('./map-worker.ts', import.meta.url)`). Hooks given by `--import` in a worker's execArgv
 * do not reach its entry module on Node 20, so a small bootstrap registers tsx in the worker first
 * and then imports the module.
 */
export function startWorker(module: URL, workerData: unknown, resourceLimits?: ResourceLimits): Worker {
  const api = import.meta.resolve('tsx/esm/api')
  const bootstrap = `import(${JSON.stringify(api)}).then((m) => { m.register(); return import(${JSON.stringify(module.href)}) })`
  return new Worker(bootstrap, { eval: true, workerData, ...(resourceLimits ? { resourceLimits } : {}) })
}

/** Default thread count: one per core, at most 8, at least 1. */
export function defaultThreads(): number {
  return Math.max(1, Math.min(8, os.availableParallelism?.() ?? os.cpus().length))
}
