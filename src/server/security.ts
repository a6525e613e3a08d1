/**
 * @module server/security
 * Who may change things, and the headers every response carries.
 *
 * Writes need the token from the config (or TIDES_TOKEN), presented one of two ways:
 * - API clients send `Authorization: Bearer <token>`. Browsers never attach that header by
 *   themselves, so a cross-site page cannot forge such a request.
 * - The dashboard signs in once with the token (POST /login) and gets an HttpOnly, SameSite=Strict
 *   session cookie `<nonce>.<hmac(token, nonce)>`; the raw token never sits in the browser.
 *   Every form then carries a CSRF field `hmac(token, "csrf." + nonce)`, and hono's csrf middleware
 *   also refuses form posts whose Origin / Sec-Fetch-Site is not this site.
 * Missing or wrong credentials answer 401; a request that has them but fails the CSRF checks, or
 * writes while no token is configured, answers 403. Both cookie and CSRF values are derived from the
 * token, so changing the token signs every browser out.
 */
import crypto from 'node:crypto'
import type { Context, MiddlewareHandler } from 'hono'
import { getCookie } from 'hono/cookie'
import { HTTPException } from 'hono/http-exception'

export const SESSION_COOKIE = 'tides_session'
export const CSRF_FIELD = '_csrf'
export const CSRF_HEADER = 'x-csrf-token'

/** The signed-in browser session, when the request carries a valid cookie. */
export interface Session {
  nonce: string
  csrf: string
}

export type SecurityEnv = {
  Variables: {
    session: Session | null
    actor: string
  }
}

function hmac(token: string, message: string): string {
  return crypto.createHmac('sha256', token).update(message).digest('base64url')
}

/** Compares two strings in time independent of where they differ (via fixed-length digests). */
export function safeEqual(a: string, b: string): boolean {
  const da = crypto.createHash('sha256').update(a).digest()
  const db = crypto.createHash('sha256').update(b).digest()
  return crypto.timingSafeEqual(da, db) && a.length === b.length
}

/** A fresh session cookie value for a browser that proved it knows the token. */
export function newSessionValue(token: string): string {
  const nonce = crypto.randomBytes(18).toString('base64url')
  return `${nonce}.${hmac(token, `session.${nonce}`)}`
}

/** Verifies a session cookie value; returns the session with its CSRF value, or null. */
export function readSession(token: string | undefined, value: string | undefined): Session | null {
  if (!token || !value) return null
  const dot = value.indexOf('.')
  if (dot <= 0) return null
  const nonce = value.slice(0, dot)
  if (!safeEqual(value.slice(dot + 1), hmac(token, `session.${nonce}`))) return null
  return { nonce, csrf: hmac(token, `csrf.${nonce}`) }
}

/** Sets `session` on every request (null when absent or invalid). */
export function sessionMiddleware(getToken: () => string | undefined): MiddlewareHandler<SecurityEnv> {
  return async (c, next) => {
    c.set('session', readSession(getToken(), getCookie(c, SESSION_COOKIE)))
    await next()
  }
}

function deny(c: Context, status: 401 | 403, message: string): never {
  const wantsJson = c.req.path.startsWith('/api/') || (c.req.header('accept') ?? '').includes('application/json')
  const headers: Record<string, string> = status === 401 ? { 'WWW-Authenticate': 'Bearer realm="skill-tides"' } : {}
  const res = wantsJson
    ? new Response(JSON.stringify({ error: message }), { status, headers: { ...headers, 'Content-Type': 'application/json; charset=utf-8' } })
    : new Response(message, { status, headers: { ...headers, 'Content-Type': 'text/plain; charset=utf-8' } })
  throw new HTTPException(status, { res })
}

/**
 * Guards a state-changing route: a valid bearer token, or a valid session cookie plus the matching
 * CSRF field (form) or header (script). Sets `actor` to 'api' or 'dashboard'.
 */
export function requireWriter(getToken: () => string | undefined): MiddlewareHandler<SecurityEnv> {
  return async (c, next) => {
    const token = getToken()
    if (!token) deny(c, 403, 'writes are disabled: no token is configured (run `tides init` or set TIDES_TOKEN)')
    const auth = c.req.header('authorization')
    if (auth !== undefined) {
      const match = /^Bearer\s+(\S+)\s*$/i.exec(auth)
      if (!match || !safeEqual(match[1]!, token)) deny(c, 401, 'wrong or malformed bearer token')
      c.set('actor', 'api')
      return next()
    }
    const session = c.get('session')
    if (!session) deny(c, 401, 'sign in with the token first (or send Authorization: Bearer <token>)')
    let presented = c.req.header(CSRF_HEADER)
    if (presented === undefined) {
      const type = c.req.header('content-type') ?? ''
      if (type.startsWith('application/x-www-form-urlencoded') || type.startsWith('multipart/form-data')) {
        const body = await c.req.parseBody()
        const field = body[CSRF_FIELD]
        presented = typeof field === 'string' ? field : undefined
      }
    }
    if (presented === undefined || !safeEqual(presented, session.csrf)) deny(c, 403, 'missing or wrong CSRF token: reload the page and try again')
    c.set('actor', 'dashboard')
    return next()
  }
}

const LOOPBACK_HOSTS = new Set(['localhost', '127.0.0.1', '[::1]', '::1'])

/**
 * On a loopback-bound server, only requests addressed to a loopback name are answered (403 else):
 * a web page whose own host name is made to resolve to 127.0.0.1 (DNS rebinding) would otherwise
 * count as same-origin and could read the dashboard.
 */
export function hostGuard(boundHost: string): MiddlewareHandler<SecurityEnv> {
  const loopback = LOOPBACK_HOSTS.has(boundHost)
  return async (c, next) => {
    if (loopback && !LOOPBACK_HOSTS.has(new URL(c.req.url).hostname)) {
      return c.text('this server answers on its loopback address only (127.0.0.1 or localhost)', 403)
    }
    return next()
  }
}

/** Content-Security-Policy: scripts, styles, images and fetches from this origin only; no inline script. */
export const CSP = {
  defaultSrc: ["'none'"],
  scriptSrc: ["'self'"],
  styleSrc: ["'self'"],
  imgSrc: ["'self'", 'data:'],
  connectSrc: ["'self'"],
  fontSrc: ["'self'"],
  formAction: ["'self'"],
  baseUri: ["'none'"],
  frameAncestors: ["'none'"],
  objectSrc: ["'none'"],
}

/** A `next` redirect target that stays on this site (a path, never `//host` or a scheme). */
export function localPath(target: string | undefined, fallback = '/'): string {
  if (!target || !target.startsWith('/') || target.startsWith('//') || target.startsWith('/\\')) return fallback
  return target
}
