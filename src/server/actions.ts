/**
 * @module server/actions
 * The writes the dashboard can start. Each one is a function owned by the stage whose tables it
 * changes (the server never writes those tables itself); this module only wires them in, so tests
 * can pass fakes and a build without a stage answers "not built" (501) instead of failing.
 */
import type { Db } from '../db/connection.ts'
import { snoozeCourseFlag } from '../plan/snooze.ts'
import { acceptAsAltLabel, acceptAsConcept, dismissCandidate } from '../taxonomy/decisions.ts'

export interface ConceptChoice {
  /** new concept id; the taxonomy stage derives one from the label when absent */
  id?: string
  label?: string
  type?: 'hard' | 'soft'
}

export interface Actions {
  snoozeCourseFlag?: (db: Db, courseId: string, note: string, untilIso: string, actor: string) => unknown
  acceptAsConcept?: (db: Db, term: string, choice: ConceptChoice, actor: string) => unknown
  acceptAsAltLabel?: (db: Db, term: string, conceptId: string, actor: string) => unknown
  dismissCandidate?: (db: Db, term: string, actor: string) => unknown
}

/** The stages' own functions, as far as this build has them. */
export function defaultActions(): Actions {
  return {
    snoozeCourseFlag: (db, courseId, note, untilIso, actor) => snoozeCourseFlag(db, courseId, note, untilIso, actor),
    acceptAsConcept: (db, term, choice, actor) => acceptAsConcept(db, term, choice, actor),
    acceptAsAltLabel: (db, term, conceptId, actor) => acceptAsAltLabel(db, term, conceptId, actor),
    dismissCandidate: (db, term, actor) => dismissCandidate(db, term, actor),
  }
}
