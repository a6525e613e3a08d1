/**
 * @module ingest/reindex
 * Signatures and band keys depend on the MinHash settings (k, bands, shingle size). The settings
 * that built the stored index are recorded; when the configuration changes, every posting's
 * signature, its sketch and its band keys are rebuilt in one transaction before new postings are
 * compared; the band rows all go to the big level (src/db/bands.ts), the recent one is emptied.
 */
import { markBandsComplete } from '../db/bands.ts'
import type { Db } from '../db/connection.ts'
import { getSetting, setSetting } from '../db/connection.ts'
import { DocumentStore, clearBands, postingsForReindex, setSignature } from '../db/documents.ts'
import { SketchStore } from '../db/sketches.ts'
import { invalidateBandFilter } from './band-filter.ts'
import { type DedupeParams, dedupeText, indexSignature } from './dedupe.ts'
import { bandKeys, minhashSignature, shingleSet, signatureToBytes } from './minhash.ts'
import { normalisedTextHash } from './text.ts'

const SETTING = 'ingest.dedupe.index'

/**
 * Makes the stored signatures and band keys match `params`.
 * @returns the number of postings re-indexed (0 when nothing had to change)
 */
export function ensureDedupeIndex(db: Db, params: DedupeParams): number {
  const wanted = indexSignature(params)
  if (getSetting(db, SETTING) === wanted) return 0
  const store = new DocumentStore(db, params.bands)
  const sketches = new SketchStore(db)
  let n = 0
  invalidateBandFilter(db)
  db.transaction(() => {
    clearBands(db)
    for (const row of [...postingsForReindex(db)]) {
      const shingles = shingleSet(normalisedTextHash(dedupeText(row)).tokens, params.shingleSize)
      if (shingles.length === 0) {
        setSignature(db, row.id, null)
        continue
      }
      const sig = minhashSignature(shingles, params.numHashes)
      // (a trigger drops the old sketch when the signature changes)
      setSignature(db, row.id, signatureToBytes(sig))
      sketches.insert(row.id, sig)
      store.insertBands(row.id, bandKeys(sig, params.bands))
      n++
    }
    markBandsComplete(db)
    setSetting(db, SETTING, wanted)
  }).immediate()
  return n
}
