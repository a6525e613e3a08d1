/**
 * @module taxonomy/candidates-report
 * What `tides report candidates` prints: the stored candidate terms (a module of its own, so that
 * the CLI's report registry does not load the matcher).
 */
import type { Db } from '../db/connection.ts'
import { candidatesComputed, listCandidates } from '../db/taxonomy.ts'

/** Rows for `tides report candidates`. */
export function candidatesReport(db: Db, opts: { limit?: number; status?: string }) {
  const computed = candidatesComputed(db)
  const rows = listCandidates(db, opts.status ?? 'open', opts.limit ?? 50).map((r) => {
    const examples = JSON.parse(r.examples_json) as { month: string; snippet: string }[]
    const trend = JSON.parse(r.trend_json) as { month: string; df: number; docs: number }[]
    return {
      term: r.term,
      score: Math.round(r.score * 10) / 10,
      recent_df: r.recent_df,
      earlier_df: r.earlier_df,
      status: r.status,
      example: examples[0]?.snippet ?? '',
      trend,
      examples,
    }
  })
  return {
    rows: rows.map(({ trend: _t, examples: _e, ...rest }) => rest),
    columns: ['term', 'score', 'recent_df', 'earlier_df', 'status', 'example'],
    json: rows,
    footer:
      `${computed ? `list computed ${computed.at}; ` : ''}` +
      'score: log-likelihood ratio (G²) of recent against earlier document frequency; accept or dismiss terms in the dashboard (/taxonomy)',
  }
}
