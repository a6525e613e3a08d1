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

const READ_FAILURES: Record<string, string> = {
  ENOENT: 'no such file or folder',
  EACCES: 'permission denied',
  EPERM: 'permission denied',
  EISDIR: 'a folder, not a file',
  ENOTDIR: 'a part of the path is not a folder',
}

/**
 * Why a file could not be read, in words, with the system's code (`cannot read: ${readFailure(err)}`).
 *
 * @example
 * ```ts
 * readFailure(Object.assign(new Error('x'), { code: 'ENOENT' })) // => 'no such file or folder (ENOENT)'
 * ```
 */
export function readFailure(err: unknown): string {
  const code = (err as NodeJS.ErrnoException | null)?.code
  if (code && READ_FAILURES[code]) return `${READ_FAILURES[code]} (${code})`
  return code ?? (err instanceof Error ? err.message : String(err))
}
