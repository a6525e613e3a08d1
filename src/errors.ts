/**
 * @module errors
 * Errors the CLI and `npm start` turn into one line without a stack (kept free of imports, so that
 * loading it costs nothing).
 */

/** The server could not start (port taken, address not available). */
export class ServeError extends Error {
  override name = 'ServeError'
}

/** Another run holds the pipeline lock (pipeline.ts withPipelineLock). */
export class BusyError extends Error {
  override name = 'BusyError'
}
