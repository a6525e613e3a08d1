// The bundled CLI in dist/ (scripts/build.ts, run by `npm install`), when it is up to date: newer
// than every file under src/. Otherwise null, and callers run the TypeScript sources under tsx, so
// an edited source is never shadowed by an older bundle. TIDES_NO_BUNDLE=1 always chooses the sources.
import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { TSX_LOADER_ARGS } from './tsx-loader.js'

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..')

/** Newest modification time (ms) of the files under dir. */
function newest(dir) {
  let latest = 0
  for (const entry of fs.readdirSync(dir, { withFileTypes: true, recursive: true })) {
    if (entry.isFile()) latest = Math.max(latest, fs.statSync(path.join(entry.parentPath ?? entry.path, entry.name)).mtimeMs)
  }
  return latest
}

/** Path of ROOT/dist/NAME.mjs if it exists and is newer than every file under ROOT/src, else null. */
export function freshBundle(name = 'cli', root = ROOT) {
  if (process.env.TIDES_NO_BUNDLE === '1') return null
  const file = path.join(root, 'dist', `${name}.mjs`)
  try {
    return fs.statSync(file).mtimeMs >= newest(path.join(root, 'src')) ? file : null
  } catch {
    return null
  }
}

/** The node arguments that run the `tides` CLI as bin/tides.js does: the fresh bundle, else the sources under tsx. */
export function cliArgs() {
  const bundle = freshBundle('cli')
  return bundle ? [bundle] : [...TSX_LOADER_ARGS, path.join(ROOT, 'src', 'cli.ts')]
}
