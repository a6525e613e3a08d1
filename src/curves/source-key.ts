/**
 * @module curves/source-key
 * A hash of the code that decides the fitted curves: every TypeScript file under src/curves and
 * src/stats, and the V8 version (its Math functions). The fit stage keeps its results while its
 * inputs, its configuration and this key are unchanged (curves/stage.ts), so that a new build with
 * another method fits afresh. The bundled CLI carries the key of the sources it was built from
 * (util/build.ts), as it has no sources to read.
 */
import crypto from 'node:crypto'
import fs from 'node:fs'
import { BUILD } from '../util/build.ts'

const SOURCE_DIRS = ['./', '../stats/']

let key: string | null | undefined

/** The hash of the fit's source files (null when one cannot be read). */
export function fitSourceKey(): string | null {
  if (BUILD) return BUILD.fitSourceKey
  if (key !== undefined) return key
  try {
    const hash = crypto.createHash('sha256')
    for (const dir of SOURCE_DIRS) {
      const url = new URL(dir, import.meta.url)
      for (const name of fs.readdirSync(url).filter((f) => f.endsWith('.ts')).sort()) {
        hash.update(`${dir}${name}\n`)
        hash.update(fs.readFileSync(new URL(name, url)))
      }
    }
    key = hash.digest('hex').slice(0, 32)
  } catch {
    key = null
  }
  return key
}

/** The key of the fit's code as this process runs it: its sources' hash and the V8 version. */
export function fitCodeKey(): string | null {
  const source = fitSourceKey()
  return source === null ? null : `${source} v8 ${process.versions.v8}`
}
