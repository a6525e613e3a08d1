/**
 * @module schedule
 * Turns the job definitions in jobs/ into node-cron tasks that start pipeline runs. Overlap is
 * prevented twice: node-cron's noOverlap per task, and the pipeline lock across tasks and processes
 * (a run that finds the lock taken waits for it up to a minute, then is skipped and logged).
 */
import cron, { type ScheduledTask } from 'node-cron'
import type { Config } from './config.ts'
import type { Db } from './db/connection.ts'
import { runPipeline } from './pipeline.ts'
import { findStage } from './stages.ts'

export interface JobTask {
  name: string
  /** node-cron expression; null = no schedule (a watched task only) */
  cron: string | null
  stages: string[]
  options: Record<string, unknown>
  /** work that is not a pipeline run (e.g. webhook delivery); returns a line to log, or '' */
  run?: (db: Db, config: Config, log: (m: string) => void) => Promise<string>
  /** a folder: the task also runs when files appear in it (fs.watch, debounced) */
  watch?: { folder: string; start: (folder: string, onFiles: () => void) => () => void }
}

export interface JobDefinition {
  name: string
  tasks(config: Config): JobTask[]
}

export interface Scheduler {
  tasks: { name: string; cron: string; task: ScheduledTask }[]
  /** stop functions of the folder watchers */
  watchers: (() => void)[]
  nextRuns(): { name: string; cron: string; next: string | null }[]
  stop(): Promise<void>
}

export function startSchedules(db: Db, config: Config, jobs: readonly JobDefinition[], log: (m: string) => void): Scheduler {
  const tasks: Scheduler['tasks'] = []
  const watchers: Scheduler['watchers'] = []
  for (const job of jobs) {
    for (const t of job.tasks(config)) {
      if (!t.run && !t.stages.every((s) => findStage(s))) continue // stage not built in this version
      const fire = async (trigger: string) => {
        try {
          if (t.run) {
            const line = await t.run(db, config, log)
            if (line) log(`${t.name}: ${line}`)
            return
          }
          const outcomes = await runPipeline(db, config, t.stages, { trigger, options: t.options, waitMs: 60_000 })
          for (const o of outcomes) log(`${t.name}: ${o.stage} ${o.error ? `failed: ${o.error}` : o.result!.summary}`)
        } catch (err) {
          log(`${t.name}: not run: ${(err as Error).message}`)
        }
      }
      if (t.watch) {
        let busy: Promise<void> | null = null
        let again = false
        const onFiles = () => {
          if (busy) {
            again = true
            return
          }
          busy = fire('watch').finally(() => {
            busy = null
            if (again) {
              again = false
              onFiles()
            }
          })
        }
        watchers.push(t.watch.start(t.watch.folder, onFiles))
      }
      if (t.cron === null) continue
      if (!cron.validate(t.cron)) {
        log(`schedule ${t.name}: invalid cron expression "${t.cron}", not scheduled`)
        continue
      }
      const task = cron.schedule(t.cron, () => fire('schedule'), { name: t.name, noOverlap: true })
      tasks.push({ name: t.name, cron: t.cron, task })
    }
  }
  return {
    tasks,
    watchers,
    nextRuns: () => tasks.map((t) => ({ name: t.name, cron: t.cron, next: t.task.getNextRun()?.toISOString() ?? null })),
    async stop() {
      for (const w of watchers) w()
      for (const t of tasks) await t.task.destroy()
    },
  }
}
