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
  cron: string
  stages: string[]
  options: Record<string, unknown>
}

export interface JobDefinition {
  name: string
  tasks(config: Config): JobTask[]
}

export interface Scheduler {
  tasks: { name: string; cron: string; task: ScheduledTask }[]
  nextRuns(): { name: string; cron: string; next: string | null }[]
  stop(): Promise<void>
}

export function startSchedules(db: Db, config: Config, jobs: readonly JobDefinition[], log: (m: string) => void): Scheduler {
  const tasks: Scheduler['tasks'] = []
  for (const job of jobs) {
    for (const t of job.tasks(config)) {
      if (!t.stages.every((s) => findStage(s))) continue // stage not built in this version
      if (!cron.validate(t.cron)) {
        log(`schedule ${t.name}: invalid cron expression "${t.cron}", not scheduled`)
        continue
      }
      const task = cron.schedule(
        t.cron,
        async () => {
          try {
            const outcomes = await runPipeline(db, config, t.stages, { trigger: 'schedule', options: t.options, waitMs: 60_000 })
            for (const o of outcomes) log(`${t.name}: ${o.stage} ${o.error ? `failed: ${o.error}` : o.result!.summary}`)
          } catch (err) {
            log(`${t.name}: not run: ${(err as Error).message}`)
          }
        },
        { name: t.name, noOverlap: true },
      )
      tasks.push({ name: t.name, cron: t.cron, task })
    }
  }
  return {
    tasks,
    nextRuns: () => tasks.map((t) => ({ name: t.name, cron: t.cron, next: t.task.getNextRun()?.toISOString() ?? null })),
    async stop() {
      for (const t of tasks) await t.task.destroy()
    },
  }
}
