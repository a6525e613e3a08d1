/**
 * @module errors
 * Errors the CLI and `npm start` turn into one line without a stack (kept free of imports, so that
 * loading it costs nothing).
 */

/** The server could not start (port taken, address not available). */
export class ServeError extends Error {
  override name = 'ServeError'
}

/** Another run holds the pipeline lock (lock.ts withPipelineLock). */
export class BusyError extends Error {
  override name = 'BusyError'
}

/**
 * This run's lease on the pipeline lock ran out without renewal (its process did not get to renew it
 * in time) and another run has taken the lock over: the run stops before its next stage.
 */
export class LockLostError extends Error {
  override name = 'LockLostError'
}
