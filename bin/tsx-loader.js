// The node options that run TypeScript sources under tsx's loader in the same process (what the
// tsx command sets up in a second process, between the caller and the program). Used by
// bin/tides.js, the pipeline benchmark and the crash tests.
import { createRequire } from 'node:module'
import { pathToFileURL } from 'node:url'

const require = createRequire(import.meta.url)

export const TSX_LOADER_ARGS = Object.freeze(['--require', require.resolve('tsx/preflight'), '--import', pathToFileURL(require.resolve('tsx')).href])
