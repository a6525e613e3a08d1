/**
 * @module server/sparkline
 * A small trend line drawn on the server as inline SVG (no script, so it obeys the page's CSP and
 * shows without JavaScript). The accessible name states first and last value in words.
 */
import { html } from 'hono/html'
import type { Html } from './layout.ts'
import { share } from './format.ts'

export const SPARK_WIDTH = 96
export const SPARK_HEIGHT = 24

/**
 * The SVG polyline points for a series scaled into the box; missing values are skipped. Shares are
 * drawn from a zero baseline (not from their minimum), so month-to-month noise of a steady skill
 * stays small and a halving looks like one.
 * @example sparkPoints([0, 1], 10, 10, 0) // => "0,10 10,0"
 * @example sparkPoints([1, 2], 10, 10, 0) // => "0,5 10,0"
 */
export function sparkPoints(values: readonly (number | null)[], width = SPARK_WIDTH, height = SPARK_HEIGHT, pad = 2): string {
  const present = values.filter((v): v is number => typeof v === 'number' && Number.isFinite(v))
  if (present.length === 0) return ''
  const min = Math.min(0, ...present)
  const max = Math.max(...present)
  const span = max - min
  const step = values.length > 1 ? (width - 2 * pad) / (values.length - 1) : 0
  const out: string[] = []
  values.forEach((v, i) => {
    if (typeof v !== 'number' || !Number.isFinite(v)) return
    const x = pad + i * step
    // a flat series sits in the middle rather than on an edge
    const y = span === 0 ? height / 2 : height - pad - ((v - min) / span) * (height - 2 * pad)
    out.push(`${round(x)},${round(y)}`)
  })
  return out.join(' ')
}

function round(x: number): number {
  return Math.round(x * 10) / 10
}

/** The inline SVG trend line, or a dash when there is nothing to draw. */
export function sparkline(values: readonly (number | null)[], label: string): Html {
  const points = sparkPoints(values)
  if (!points) return html`<span class="no-trend">no data</span>`
  const present = values.filter((v): v is number => typeof v === 'number' && Number.isFinite(v))
  const first = present[0]!
  const last = present[present.length - 1]!
  const words = `${label}: share of postings from ${share(first)} to ${share(last)} over ${values.length} months`
  const lastPoint = points.split(' ').pop()!.split(',')
  return html`<svg class="spark" role="img" aria-label="${words}" width="${SPARK_WIDTH}" height="${SPARK_HEIGHT}" viewBox="0 0 ${SPARK_WIDTH} ${SPARK_HEIGHT}"><title>${words}</title><polyline points="${points}" fill="none" stroke="currentColor" stroke-width="1.5"/><circle cx="${lastPoint[0]}" cy="${lastPoint[1]}" r="2" fill="currentColor"/></svg>`
}
