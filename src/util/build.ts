/**
 * @module util/build
 * Whether this code runs from the bundled CLI (`dist/`, written by scripts/build.ts when the
 * project is installed) or from its TypeScript sources under tsx, and what differs: the project's
 * root directory, the worker threads' entry files, and the source keys of the matcher cache and of
 * the fit (the bundle carries the ones of the sources it was built from).
 */
import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'

/** Facts scripts/build.ts writes into the bundle (esbuild `define`). */
export interface BuildFacts {
  /** taxonomy/matcher-cache.ts matcherSourceKey() of the sources the bundle was built from */
  matcherSourceKey: string | null
  /** curves/source-key.ts fitSourceKey() of the sources the bundle was built from */
  fitSourceKey: string | null
}

declare const __TIDES_BUILD__: BuildFacts | undefined

/** The bundle's facts, or null when running from the sources. */
export const BUILD: BuildFacts | null = typeof __TIDES_BUILD__ === 'undefined' ? null : __TIDES_BUILD__

/**
 * The project's root (package.json, dashboard/, taxonomy/): the nearest directory above this module
 * (src/util/build.ts, or a bundle in dist/) whose package.json is this project's.
 */
export const PROJECT_ROOT = findRoot(path.dirname(fileURLToPath(import.meta.url)))

function findRoot(from: string): string {
  for (let dir = from; ; dir = path.dirname(dir)) {
    try {
      if ((JSON.parse(fs.readFileSync(path.join(dir, 'package.json'), 'utf8')) as { name?: unknown }).name === 'skill-tides') return dir
    } catch {
      // no package.json here, or not readable: look further up
    }
    if (path.dirname(dir) === dir) return path.resolve(from, BUILD ? '..' : '../..')
  }
}
