// Preloaded (node --import) into each step of bench/pipeline.ts: prints the process's peak resident
// set size on stderr as it exits, so the parent can report the peak RSS of every step it ran.
import fs from 'node:fs'

process.on('exit', () => {
  fs.writeSync(2, `\nBENCH_PEAK_RSS_KIB ${process.resourceUsage().maxRSS}\n`)
})
