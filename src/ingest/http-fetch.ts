/**
 * @module ingest/http-fetch
 * Fetches a source over HTTP(S) the careful way: one deadline for the whole response (a slow server
 * that trickles bytes is cut too), a maximum body size counted after decompression (so a small
 * gzip bomb is cut as well), a limited number of redirects (http/https targets only), conditional
 * requests with the stored ETag / Last-Modified (RFC 9110 section 13.1: a 304 costs no body), and
 * retries with exponential backoff on 5xx, 429 and network errors. A body that is cut or whose gzip
 * stream ends early is returned with `incomplete` set, so the caller can keep the complete items and
 * say what happened.
 */
import http from 'node:http'
import https from 'node:https'
import zlib from 'node:zlib'

export interface FetchOptions {
  timeoutMs: number
  maxBytes: number
  maxRedirects: number
  retries: number
  backoffMs: number
  etag?: string | null
  lastModified?: string | null
  accept?: string
  /** waits between retries; tests pass a fast one */
  sleep?: (ms: number) => Promise<void>
}

export type FetchResult =
  | { status: 'not-modified'; url: string; attempts: number }
  | {
      status: 'ok'
      url: string
      body: Buffer
      contentType: string | null
      etag: string | null
      lastModified: string | null
      /** why the body is not the whole resource (size limit, truncated gzip), or null */
      incomplete: string | null
      attempts: number
    }

/** A fetch that failed; `retryable` for 5xx, 429, timeouts and network errors. */
export class FetchError extends Error {
  constructor(
    message: string,
    readonly retryable: boolean,
    readonly url: string,
  ) {
    super(message)
    this.name = 'FetchError'
  }
}

const USER_AGENT = 'skill-tides/0.1 (job-posting ingest)'

/**
 * Fetches `url`, retrying transient failures.
 * @throws FetchError with a message that says what went wrong and how many attempts were made
 */
export async function fetchSource(url: string, opts: FetchOptions): Promise<FetchResult> {
  const sleep = opts.sleep ?? ((ms: number) => new Promise<void>((r) => setTimeout(r, ms)))
  let last: FetchError | null = null
  for (let attempt = 0; attempt <= opts.retries; attempt++) {
    if (attempt > 0) await sleep(opts.backoffMs * 2 ** (attempt - 1))
    try {
      const result = await fetchFollowing(url, opts, opts.maxRedirects)
      return { ...result, attempts: attempt + 1 }
    } catch (err) {
      last = err instanceof FetchError ? err : new FetchError((err as Error).message, true, url)
      if (!last.retryable) break
    }
  }
  const tries = opts.retries + 1
  const n = last!.retryable ? ` (after ${tries} attempt${tries === 1 ? '' : 's'})` : ''
  throw new FetchError(`${last!.message}${n}`, last!.retryable, last!.url)
}

type Single = Omit<Extract<FetchResult, { status: 'ok' }>, 'attempts'> | Omit<Extract<FetchResult, { status: 'not-modified' }>, 'attempts'>

async function fetchFollowing(url: string, opts: FetchOptions, redirectsLeft: number): Promise<Single> {
  let current = url
  for (let hop = 0; ; hop++) {
    const r = await fetchOnce(current, opts)
    if (r.kind !== 'redirect') return r.result
    if (hop >= redirectsLeft) throw new FetchError(`too many redirects (more than ${opts.maxRedirects}; last to ${r.location})`, false, url)
    current = r.location
  }
}

type Once = { kind: 'result'; result: Single } | { kind: 'redirect'; location: string }

function fetchOnce(url: string, opts: FetchOptions): Promise<Once> {
  let target: URL
  try {
    target = new URL(url)
  } catch {
    return Promise.reject(new FetchError(`not a valid URL: ${url}`, false, url))
  }
  if (target.protocol !== 'http:' && target.protocol !== 'https:') return Promise.reject(new FetchError(`only http and https URLs can be fetched, not ${target.protocol}`, false, url))
  const headers: Record<string, string> = { 'User-Agent': USER_AGENT, 'Accept-Encoding': 'gzip, deflate', Accept: opts.accept ?? '*/*' }
  if (opts.etag) headers['If-None-Match'] = opts.etag
  if (opts.lastModified) headers['If-Modified-Since'] = opts.lastModified
  const get = target.protocol === 'https:' ? https.get : http.get
  return new Promise<Once>((resolve, reject) => {
    let settled = false
    const finish = (fn: () => void) => {
      if (settled) return
      settled = true
      clearTimeout(timer)
      fn()
    }
    const fail = (err: FetchError) => finish(() => reject(err))
    const req = get(target, { headers }, (res) => {
      const status = res.statusCode ?? 0
      if (status >= 300 && status < 400 && status !== 304 && res.headers.location) {
        res.resume()
        let next: URL
        try {
          next = new URL(res.headers.location, target)
        } catch {
          return fail(new FetchError(`redirect to an invalid location "${res.headers.location}"`, false, url))
        }
        if (next.protocol !== 'http:' && next.protocol !== 'https:') return fail(new FetchError(`redirect to a ${next.protocol} URL refused`, false, url))
        return finish(() => resolve({ kind: 'redirect', location: next.href }))
      }
      if (status === 304) {
        res.resume()
        return finish(() => resolve({ kind: 'result', result: { status: 'not-modified', url } }))
      }
      if (status < 200 || status >= 300) {
        res.resume()
        const retryable = status >= 500 || status === 429
        return fail(new FetchError(`HTTP ${status} ${res.statusMessage ?? ''}`.trim() + ` from ${url}`, retryable, url))
      }
      const declared = Number(res.headers['content-length'])
      const encoding = String(res.headers['content-encoding'] ?? 'identity').toLowerCase()
      const plain = encoding === 'identity' || encoding === ''
      if (plain && Number.isFinite(declared) && declared > opts.maxBytes) {
        res.destroy()
        return fail(new FetchError(`body is ${declared} bytes, over the limit of ${opts.maxBytes} (ingest.maxBytes)`, false, url))
      }
      let stream: NodeJS.ReadableStream = res
      if (encoding === 'gzip' || encoding === 'x-gzip') stream = res.pipe(zlib.createGunzip())
      else if (encoding === 'deflate') stream = res.pipe(zlib.createInflate())
      else if (!plain) {
        res.destroy()
        return fail(new FetchError(`unsupported Content-Encoding "${encoding}"`, false, url))
      }
      const chunks: Buffer[] = []
      let size = 0
      const done = (incomplete: string | null) =>
        finish(() =>
          resolve({
            kind: 'result',
            result: {
              status: 'ok',
              url,
              body: Buffer.concat(chunks),
              contentType: res.headers['content-type'] ?? null,
              etag: incomplete ? null : (res.headers.etag ?? null),
              lastModified: incomplete ? null : (res.headers['last-modified'] ?? null),
              incomplete,
            },
          }),
        )
      stream.on('data', (chunk: Buffer) => {
        if (settled) return
        if (size + chunk.length > opts.maxBytes) {
          chunks.push(chunk.subarray(0, opts.maxBytes - size))
          size = opts.maxBytes
          req.destroy()
          return done(`body is over the limit of ${opts.maxBytes} bytes (ingest.maxBytes); read only the first ${opts.maxBytes}`)
        }
        chunks.push(chunk)
        size += chunk.length
      })
      stream.on('end', () => done(res.complete ? null : 'the connection closed before the body was complete'))
      stream.on('error', (err: NodeJS.ErrnoException) => {
        if (stream !== res) return done(`compressed body is truncated or corrupt (${encoding}: ${err.message})`)
        fail(new FetchError(`connection error while reading the body: ${err.message}`, true, url))
      })
      res.on('aborted', () => {
        if (!settled && stream === res) done('the connection closed before the body was complete')
      })
    })
    const timer = setTimeout(() => {
      fail(new FetchError(`timed out after ${opts.timeoutMs} ms (ingest.timeoutMs)`, true, url))
      req.destroy()
    }, opts.timeoutMs)
    req.on('error', (err: NodeJS.ErrnoException) => fail(new FetchError(`network error: ${err.code ?? err.message}`, true, url)))
  })
}
