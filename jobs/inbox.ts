/**
 * Inbox folders: a folder source is ingested as soon as a file appears in it (fs.watch, debounced),
 * not only on its schedule; the pipeline then ripples as after any ingest.
 */
import { resolveLocal } from '../src/ingest/run-source.ts'
import { watchInbox } from '../src/ingest/inbox.ts'
import type { JobDefinition } from '../src/schedule.ts'

export const inboxJob: JobDefinition = {
  name: 'inbox',
  tasks: (config) =>
    config.sources
      .filter((s) => s.kind === 'folder')
      .map((s) => ({
        name: `inbox:${s.id}`,
        cron: null,
        stages: ['ingest'],
        options: { source: s.id },
        watch: { folder: resolveLocal(config, s.location), start: (folder: string, onFiles: () => void) => watchInbox(folder, onFiles) },
      })),
}
