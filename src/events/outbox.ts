/**
 * @module events/outbox
 * Events are rows in the outbox first, written in the same transaction as the work they announce,
 * and handed to consumers only after commit: a crash never loses one and never announces work that
 * rolled back. Each consumer (a stage, a webhook endpoint) keeps a cursor; delivery is at least once.
 */
import type { Db } from '../db/connection.ts'
import { eventsAfter, getCursor, insertEvent, setCursor, type EventRow } from '../db/events.ts'

/** Event types the pipeline emits. */
export type EventType =
  | 'documents.ingested'
  | 'documents.mapped'
  | 'taxonomy.changed'
  | 'curves.fitted'
  | 'skill.state-changed'
  | 'ability.updated'
  | 'plan.updated'
  | 'course.flagged'

/**
 * Writes an event to the outbox. Call it inside the transaction of the work it announces.
 * @example
 * db.transaction(() => { insertDocs(); emit(db, 'documents.ingested', { source: 'x', new: 3 }) })()
 */
export function emit(db: Db, type: EventType, payload: Record<string, unknown>): number {
  if (!db.inTransaction) throw new Error(`emit(${type}) must be called inside the transaction of the work it announces`)
  return insertEvent(db, type, payload)
}

export interface PendingEvents {
  events: EventRow[]
  /** the cursor to store once the consumer has handled them */
  upTo: number
}

/** The events a consumer has not yet handled, of the given types. */
export function pendingFor(db: Db, consumer: string, types: readonly string[]): PendingEvents {
  const after = getCursor(db, consumer)
  const events = eventsAfter(db, after, types, 10_000)
  const upTo = events.length ? events[events.length - 1]!.id : after
  return { events, upTo }
}

/** Marks events up to `upTo` as handled by the consumer. */
export function acknowledge(db: Db, consumer: string, upTo: number): void {
  setCursor(db, consumer, upTo)
}

export function parsePayload(event: EventRow): Record<string, unknown> {
  return JSON.parse(event.payload_json) as Record<string, unknown>
}
