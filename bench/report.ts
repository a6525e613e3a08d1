/**
 * Shared output of the benchmarks: a printed table for people, and one `BENCH_JSON` line that
 * bench/run.ts collects into bench/results.json. Every report carries the process's peak RSS.
 */
import os from 'node:os'

export interface Figure {
  figure: string
  value: number
  unit: string
  /** the goal, e.g. '< 5 s' or '>= 0.35', printed beside the value */
  goal?: string
  /** whether the goal was met (omit when there is none) */
  met?: boolean
}

/** Peak resident set size of this process so far, in MiB (getrusage maxrss). */
export function peakRssMiB(): number {
  return process.resourceUsage().maxRSS / 1024
}

function fmt(v: number): string {
  if (!Number.isFinite(v)) return String(v)
  const abs = Math.abs(v)
  return abs >= 1000 ? Math.round(v).toLocaleString('en-GB') : abs >= 10 ? v.toFixed(1) : v.toPrecision(3)
}

/** Prints the figures as a table and a machine-readable line. */
export function reportBench(name: string, figures: Figure[]): void {
  // other work on a shared machine slows every figure; the load average says how much there was
  const all = [
    ...figures,
    { figure: 'peak RSS', value: peakRssMiB(), unit: 'MiB' },
    { figure: 'machine load average (1 min) at the end', value: os.loadavg()[0]!, unit: `on ${os.cpus().length} cores` },
  ]
  const w = Math.max(...all.map((f) => f.figure.length))
  process.stdout.write(`\n== ${name}\n`)
  for (const f of all) {
    const goal = f.goal ? `  (goal ${f.goal}: ${f.met === undefined ? '?' : f.met ? 'met' : 'NOT met'})` : ''
    process.stdout.write(`  ${f.figure.padEnd(w)}  ${fmt(f.value).padStart(12)} ${f.unit}${goal}\n`)
  }
  process.stdout.write(`BENCH_JSON ${JSON.stringify({ name, figures: all })}\n`)
}
