/**
 * @module ingest/progress
 * A one-line progress display for long imports (documents/s and ETA), redrawn in place on stderr.
 * Shown only on a terminal: never under --json, in CI (the CI variable), or when TIDES_PROGRESS=0.
 */

export interface Progress {
  /** documents done so far and, when known, the fraction of the input read (0..1) */
  update(documents: number, fraction?: number): void
  done(): void
}

const SILENT: Progress = { update() {}, done() {} }

/** Whether a progress line may be drawn in this process. */
export function progressAllowed(env: NodeJS.ProcessEnv = process.env, argv: readonly string[] = process.argv, isTty = Boolean(process.stderr.isTTY)): boolean {
  if (env['TIDES_PROGRESS'] === '1') return true
  if (env['TIDES_PROGRESS'] === '0' || env['CI']) return false
  return isTty && !argv.includes('--json')
}

/** Formats the line: `label: 12,345 docs, 10,234 docs/s, 45% ETA 3 s`. */
export function progressLine(label: string, documents: number, elapsedMs: number, fraction?: number): string {
  const rate = elapsedMs > 0 ? (documents * 1000) / elapsedMs : 0
  let eta = ''
  if (fraction !== undefined && fraction > 0.01 && fraction < 1) eta = `, ${Math.round(fraction * 100)}% ETA ${Math.ceil((elapsedMs * (1 - fraction)) / fraction / 1000)} s`
  return `${label}: ${documents.toLocaleString('en-GB')} docs, ${Math.round(rate).toLocaleString('en-GB')} docs/s${eta}`
}

export function createProgress(label: string, write: (s: string) => void = (s) => process.stderr.write(s), allowed = progressAllowed()): Progress {
  if (!allowed) return SILENT
  const started = performance.now()
  let last = 0
  let shown = false
  return {
    update(documents, fraction) {
      const now = performance.now()
      if (now - last < 200) return
      last = now
      shown = true
      write(`\r\u001b[2K${progressLine(label, documents, now - started, fraction)}`)
    },
    done() {
      if (shown) write('\r\u001b[2K')
    },
  }
}
