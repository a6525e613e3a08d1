/**
 * @module db/events
 * The events outbox and the consumer cursors (SQL only; see src/events/ for the behaviour).
 */
import type { Db } from './connection.ts'

export interface EventRow {
  id: number
  type: string
  payload_json: string
  created_at: string
}

/** Appends an event; call inside the transaction of the work it announces. */
export function insertEvent(db: Db, type: string, payload: unknown): number {
  return Number(db.prepare('INSERT INTO events(type, payload_json) VALUES (?, ?)').run(type, JSON.stringify(payload)).lastInsertRowid)
}

/** Events after `afterId` whose type is one of `types` (all types when empty), oldest first. */
export function eventsAfter(db: Db, afterId: number, types: readonly string[] = [], limit = 1000): EventRow[] {
  if (types.length === 0) {
    return db.prepare('SELECT * FROM events WHERE id > ? ORDER BY id LIMIT ?').all(afterId, limit) as EventRow[]
  }
  const marks = types.map(() => '?').join(', ')
  return db.prepare(`SELECT * FROM events WHERE id > ? AND type IN (${marks}) ORDER BY id LIMIT ?`).all(afterId, ...types, limit) as EventRow[]
}

export function latestEventId(db: Db): number {
  return (db.prepare('SELECT COALESCE(MAX(id), 0) AS id FROM events').get() as { id: number }).id
}

export function getCursor(db: Db, consumer: string): number {
  const row = db.prepare('SELECT last_event_id FROM event_cursors WHERE consumer = ?').get(consumer) as { last_event_id: number } | undefined
  return row?.last_event_id ?? 0
}

export function setCursor(db: Db, consumer: string, lastEventId: number): void {
  db.prepare(
    'INSERT INTO event_cursors(consumer, last_event_id) VALUES (?, ?) ON CONFLICT(consumer) DO UPDATE SET last_event_id = MAX(last_event_id, excluded.last_event_id)',
  ).run(consumer, lastEventId)
}

/** The latest events, newest first, for reports and the dashboard. */
export function recentEvents(db: Db, limit = 100): EventRow[] {
  return db.prepare('SELECT * FROM events ORDER BY id DESC LIMIT ?').all(limit) as EventRow[]
}
