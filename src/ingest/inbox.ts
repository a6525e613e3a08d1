/**
 * @module ingest/inbox
 * Inbox folders: each file dropped into the folder is ingested once, then moved to `processed/`
 * (with `<name>.problems.txt` when some rows were bad) or to `rejected/` (with `<name>.reason.txt`)
 * when nothing in it could be used. The file type follows the extension: .xml/.rss/.atom feeds,
 * .jsonl/.ndjson JSON Lines (postings, or requests when the source says so), .csv request logs.
 * Files whose names start with a dot or end in .tmp/.part/.partial are left alone: write under
 * such a name, then rename, so that a half-written file is never read.
 * Crash safety: a file moves only after its documents committed; a run killed before the move
 * reads the file again next time and finds its documents already stored.
 */
import fs from 'node:fs'
import path from 'node:path'
import type { SourceConfig } from '../config.ts'
import type { SourceRow } from '../db/documents.ts'
import type { FolderOptions } from './config.ts'
import { formatItemProblem } from './document.ts'
import { type SourceEnv, type SourceOutcome, resolveLocal, runFeed, runJsonLines, runRequests } from './run-source.ts'
import type { BatchWriter, IngestCounts } from './writer.ts'

export const PROCESSED = 'processed'
export const REJECTED = 'rejected'

const IGNORED = /^\.|\.(tmp|part|partial|crdownload)$/i

export type InboxFileKind = 'feed' | 'postings' | 'requests'

/** The kind of an inbox file by its extension, or null for an unknown one. */
export function inboxFileKind(name: string, documents: FolderOptions['documents']): InboxFileKind | null {
  const ext = path.extname(name).toLowerCase()
  if (ext === '.xml' || ext === '.rss' || ext === '.atom') return 'feed'
  if (ext === '.jsonl' || ext === '.ndjson') return documents
  if (ext === '.csv') return 'requests'
  return null
}

/** Files waiting in the inbox, oldest name first (sorted, so runs are reproducible). */
export function pendingFiles(folder: string): string[] {
  let entries: fs.Dirent[]
  try {
    entries = fs.readdirSync(folder, { withFileTypes: true })
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') return []
    throw err
  }
  return entries.filter((e) => e.isFile() && !IGNORED.test(e.name)).map((e) => e.name).sort()
}

function moveTo(folder: string, sub: string, name: string, note: string | null): string {
  const dir = path.join(folder, sub)
  fs.mkdirSync(dir, { recursive: true })
  let dest = path.join(dir, name)
  if (fs.existsSync(dest)) dest = path.join(dir, `${path.basename(name, path.extname(name))}-${new Date().toISOString().replace(/[:.]/g, '')}${path.extname(name)}`)
  fs.renameSync(path.join(folder, name), dest)
  if (note !== null) fs.writeFileSync(`${dest}.${sub === REJECTED ? 'reason' : 'problems'}.txt`, note)
  return dest
}

export interface InboxFileResult {
  file: string
  kind: InboxFileKind | null
  movedTo: 'processed' | 'rejected'
  read: number
  new: number
  duplicate: number
  rejected: number
  reason: string | null
}

function delta(after: IngestCounts, before: IngestCounts): Pick<InboxFileResult, 'read' | 'new' | 'duplicate' | 'rejected'> {
  return { read: after.read - before.read, new: after.new - before.new, duplicate: after.duplicate - before.duplicate, rejected: after.rejected - before.rejected }
}

/** Ingests every pending file of a folder source and moves each out of the inbox. */
export async function runFolder(env: SourceEnv, source: SourceConfig, row: SourceRow, writer: BatchWriter): Promise<SourceOutcome> {
  const folder = resolveLocal(env.config, source.location)
  if (!fs.existsSync(folder)) fs.mkdirSync(folder, { recursive: true })
  else if (!fs.statSync(folder).isDirectory()) return { error: `${folder} is not a folder`, failed: true, details: {} }
  const documents = (source.options['documents'] as FolderOptions['documents'] | undefined) ?? 'postings'
  const files: InboxFileResult[] = []
  const fileEnv: SourceEnv = { ...env, track: false }
  const blank: SourceRow = { ...row, etag: null, last_modified: null, cursor: null }
  for (const name of pendingFiles(folder)) {
    const full = path.join(folder, name)
    const kind = inboxFileKind(name, documents)
    const before = { ...writer.counts }
    const problemsBefore = writer.problemCount
    const keptBefore = writer.problems.length
    let outcome: SourceOutcome
    if (kind === null) outcome = { error: 'unknown file type (expected .xml, .rss, .atom, .jsonl, .ndjson or .csv)', failed: true, details: {} }
    else if (fs.statSync(full).size === 0) outcome = { error: 'empty file', failed: true, details: {} }
    else {
      const fileSource: SourceConfig = { ...source, location: full, options: kind === 'requests' ? { format: name.toLowerCase().endsWith('.csv') ? 'csv' : 'jsonl' } : {} }
      try {
        outcome =
          kind === 'feed' ? await runFeed(fileEnv, fileSource, blank, writer) : kind === 'requests' ? await runRequests(fileEnv, fileSource, blank, writer) : await runJsonLines(fileEnv, fileSource, blank, writer, 'postings')
      } catch (err) {
        outcome = { error: (err as Error).message, failed: true, details: {} }
      }
    }
    const d = delta(writer.counts, before)
    const stored = d.new + d.duplicate
    const rejectedWhole = outcome.failed || (stored === 0 && d.rejected > 0)
    const lines = writer.problems.slice(keptBefore).map(formatItemProblem)
    const more = writer.problemCount - problemsBefore - lines.length
    if (more > 0) lines.push(`... and ${more} more problems (see the run record)`)
    const reason = outcome.error ?? (rejectedWhole ? 'no usable rows' : null)
    const note = [reason, ...lines].filter((x): x is string => Boolean(x)).join('\n')
    moveTo(folder, rejectedWhole ? REJECTED : PROCESSED, name, note ? `${note}\n` : null)
    files.push({ file: name, kind, movedTo: rejectedWhole ? 'rejected' : 'processed', ...d, reason })
  }
  const rejectedFiles = files.filter((f) => f.movedTo === 'rejected')
  return {
    error: rejectedFiles.length ? `${rejectedFiles.length} of ${files.length} file(s) rejected: ${rejectedFiles.map((f) => `${f.file} (${f.reason})`).join('; ')}` : null,
    failed: false,
    details: { folder, files },
  }
}

/**
 * Watches an inbox folder and calls `onFiles` (debounced) when files are waiting in it. The
 * watcher also fires for files this program moves out; it only calls back when one is waiting.
 * @returns a function that stops watching
 */
export function watchInbox(folder: string, onFiles: () => void, debounceMs = 500): () => void {
  fs.mkdirSync(folder, { recursive: true })
  let timer: NodeJS.Timeout | null = null
  const watcher = fs.watch(folder, { persistent: false }, (_event, name) => {
    if (name && (IGNORED.test(name) || name === PROCESSED || name === REJECTED)) return
    if (timer) clearTimeout(timer)
    timer = setTimeout(() => {
      timer = null
      if (pendingFiles(folder).length > 0) onFiles()
    }, debounceMs)
  })
  watcher.on('error', () => {})
  return () => {
    if (timer) clearTimeout(timer)
    watcher.close()
  }
}
