/**
 * @module commands/registry
 * What the CLI can import and report. Each area registers its importers and reports here; the CLI
 * itself only parses arguments and prints. A kind or report that is not built says so (exit 1).
 */
import type { Config } from '../config.ts'
import type { Db } from '../db/connection.ts'
import { type ImportResult, TABLE_KINDS, importTableFile, type TableKind } from '../inputs/tables.ts'
import { listRuns } from '../db/runs.ts'
import { coverageReport } from '../ability/report.ts'
import { PLAN_REPORTS } from '../plan/reports.ts'
import { SKILLS_REPORT } from '../curves/report.ts'
import { candidatesReport } from '../taxonomy/candidates-report.ts'

export interface ImportOptions {
  skipBad: boolean
  log: (message: string) => void
}

export type Importer = (db: Db, config: Config, file: string, opts: ImportOptions) => Promise<ImportResult> | ImportResult

export const IMPORT_KINDS = ['postings', 'requests', 'taxonomy', ...TABLE_KINDS] as const
export type ImportKind = (typeof IMPORT_KINDS)[number]

// the document and taxonomy importers load their modules when used: every `tides` command loads
// this registry, and those modules (the ingest pipeline, the matcher) took a quarter of its start
export const IMPORTERS: Partial<Record<ImportKind, Importer>> = {
  ...Object.fromEntries(TABLE_KINDS.map((kind: TableKind) => [kind, (db: Db, _c: Config, file: string, opts: ImportOptions) => importTableFile(db, kind, file, opts)])),
  postings: async (db, config, file, opts) => (await import('../ingest/import.ts')).importDocuments(db, config, 'postings', file, opts),
  requests: async (db, config, file, opts) => (await import('../ingest/import.ts')).importDocuments(db, config, 'requests', file, opts),
  taxonomy: async (db, _config, file, opts) => (await import('../taxonomy/store.ts')).importTaxonomy(db, file, opts),
}

export interface ReportOutput {
  /** rows for --csv and the text table */
  rows: Record<string, unknown>[]
  columns: string[]
  /** what --json prints (defaults to rows) */
  json?: unknown
  /** a line printed after the text table (cautions, counts) */
  footer?: string
}

export interface ReportOptions {
  limit?: number
  /** person-level output, only where a report supports it */
  people?: boolean
  [key: string]: unknown
}

export interface Report {
  description: string
  build(db: Db, config: Config, opts: ReportOptions): ReportOutput
}

export const REPORTS: Record<string, Report> = {
  coverage: {
    description: 'skill coverage of role requirements (SE-aware), per role and per skill; --people for person-level rows',
    build: (db, config, opts) => coverageReport(db, config, opts),
  },
  runs: {
    description: 'job runs, newest first: stage, source, status, counts, error',
    build(db, _config, opts) {
      const runs = listRuns(db, opts.limit ?? 50)
      const rows = runs.map((r) => ({
        id: r.id,
        stage: r.stage,
        source: r.source_id ?? '',
        trigger: r.trigger,
        started: r.started_at,
        ended: r.ended_at ?? '',
        status: r.status,
        read: r.read,
        new: r.new,
        duplicate: r.duplicate,
        rejected: r.rejected,
        error: r.error ?? '',
      }))
      return { rows, columns: ['id', 'stage', 'source', 'trigger', 'started', 'ended', 'status', 'read', 'new', 'duplicate', 'rejected', 'error'] }
    },
  },
  candidates: {
    description: 'rising terms that are not in the taxonomy (G² of recent vs earlier document frequency), with examples',
    build: (db, _config, opts) => candidatesReport(db, { ...(opts.limit !== undefined ? { limit: opts.limit } : {}), ...(typeof opts['status'] === 'string' ? { status: opts['status'] } : {}) }),
  },
  skills: SKILLS_REPORT,
  ...PLAN_REPORTS,
}

/** Report names DESIGN.md promises; those not in REPORTS yet answer "not built". */
export const PLANNED_REPORTS = ['needs', 'skills', 'courses', 'reskilling', 'candidates', 'coverage', 'runs'] as const
