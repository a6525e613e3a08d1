/**
 * @module plan/snooze
 * Course owners can snooze a retire or refresh flag until a date, with a note. Every snooze and
 * unsnooze is a row in course_flag_notes (the audit trail); a snooze covers the flag it was given
 * for, so a course that moves from "refresh" to "retire" is shown again at once.
 */
import type { Db } from '../db/connection.ts'
import { courseExists, insertFlagNote, latestSnoozeNotes, readFlagNotes, readPlanOutputs, type FlagNoteRecord } from '../db/plan.ts'
import type { CourseFlag } from './course-flags.ts'

/** A snooze request that cannot be accepted; the message says which argument and why. */
export class SnoozeError extends Error {
  override name = 'SnoozeError'
}

function currentFlag(db: Db, courseId: string): CourseFlag['flag'] | null {
  const row = readPlanOutputs<CourseFlag>(db, 'course-flag').find((r) => r.key === courseId)
  return row ? row.payload.flag : null
}

/**
 * Snoozes the current flag of a course until `untilIso`, with a note, audited in course_flag_notes.
 * @param untilIso an ISO 8601 date or date-time in the future ('2026-03-31' means its start, UTC)
 * @throws SnoozeError for an unknown course, a course without a retire/refresh flag, an empty note
 *   or actor, or a date that is not a valid future date
 * @example snoozeCourseFlag(db, 'c-flash', 'replacement course launches in spring', '2026-04-01', 'owner@fernhollow')
 */
export function snoozeCourseFlag(db: Db, courseId: string, note: string, untilIso: string, actor: string, now: Date = new Date()): FlagNoteRecord {
  if (!courseExists(db, courseId)) throw new SnoozeError(`snooze: unknown course "${courseId}"`)
  const flag = currentFlag(db, courseId)
  if (flag === null) throw new SnoozeError(`snooze: course "${courseId}" has no flag yet (run the plan stage first)`)
  if (flag === 'keep') throw new SnoozeError(`snooze: course "${courseId}" is flagged keep; only retire and refresh flags can be snoozed`)
  const text = typeof note === 'string' ? note.trim() : ''
  if (!text) throw new SnoozeError('snooze: a note saying why is required')
  if (text.length > 2000) throw new SnoozeError(`snooze: note is ${text.length} characters, at most 2000`)
  const who = typeof actor === 'string' ? actor.trim() : ''
  if (!who) throw new SnoozeError('snooze: actor (who snoozes) is required')
  if (typeof untilIso !== 'string' || !/^\d{4}-\d{2}-\d{2}([T ][\d:.]+(Z|[+-]\d{2}:?\d{2})?)?$/.test(untilIso.trim())) {
    throw new SnoozeError(`snooze: until must be an ISO 8601 date such as 2026-03-31, got "${String(untilIso)}"`)
  }
  const until = new Date(untilIso.trim())
  // Date rolls 2026-02-30 over to March 2: check the calendar day ourselves
  const [y, m, d] = untilIso.trim().slice(0, 10).split('-').map(Number) as [number, number, number]
  const daysInMonth = new Date(Date.UTC(y, m, 0)).getUTCDate()
  if (Number.isNaN(until.getTime()) || m < 1 || m > 12 || d < 1 || d > daysInMonth) throw new SnoozeError(`snooze: until "${untilIso}" is not a real date`)
  if (until.getTime() <= now.getTime()) throw new SnoozeError(`snooze: until ${until.toISOString()} is not in the future`)
  const tx = db.transaction(() => {
    const id = insertFlagNote(db, { course_id: courseId, action: 'snooze', flag, note: text, actor: who, until: until.toISOString() }, now.toISOString())
    return readFlagNotes(db, courseId).find((n) => n.id === id)!
  })
  return tx()
}

/** Ends a course's snooze early, with a note, audited. */
export function unsnoozeCourseFlag(db: Db, courseId: string, note: string, actor: string, now: Date = new Date()): FlagNoteRecord {
  if (!courseExists(db, courseId)) throw new SnoozeError(`unsnooze: unknown course "${courseId}"`)
  const who = typeof actor === 'string' ? actor.trim() : ''
  if (!who) throw new SnoozeError('unsnooze: actor is required')
  const id = insertFlagNote(db, { course_id: courseId, action: 'unsnooze', flag: currentFlag(db, courseId), note: (note ?? '').trim(), actor: who, until: null }, now.toISOString())
  return readFlagNotes(db, courseId).find((n) => n.id === id)!
}

export interface SnoozeState {
  until: string
  note: string
  actor: string
  at: string
  flag: string | null
}

/** Snoozes in force now: the latest snooze of a course, not lifted, not expired, for its current flag. */
export function activeSnoozes(db: Db, flags: ReadonlyMap<string, string>, now: Date = new Date()): Map<string, SnoozeState> {
  const out = new Map<string, SnoozeState>()
  for (const [courseId, n] of latestSnoozeNotes(db)) {
    if (n.action !== 'snooze' || n.until === null) continue
    if (Date.parse(n.until) <= now.getTime()) continue
    if (flags.get(courseId) !== n.flag) continue
    out.set(courseId, { until: n.until, note: n.note, actor: n.actor, at: n.at, flag: n.flag })
  }
  return out
}
