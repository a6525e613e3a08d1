/**
 * @module server/pages/write
 * Shared handling of state-changing requests: reading a JSON or form body, and reporting the outcome
 * on the page (forms) or as JSON (API).
 */
import { html } from 'hono/html'
import { HTTPException } from 'hono/http-exception'
import type { Ctx } from '../deps.ts'
import { notice, type Html } from '../layout.ts'
import { CSRF_FIELD } from '../security.ts'

export interface WriteOutcome {
  status: 200 | 400 | 404 | 409 | 501
  message: string
}

/**
 * The request's fields from a JSON object body or a form body (the CSRF field removed).
 * @throws HTTPException 400 for a body that is not a JSON object, 415 for other content types
 */
export async function readWrite(c: Ctx): Promise<Record<string, unknown>> {
  const type = c.req.header('content-type') ?? ''
  if (type.startsWith('application/json')) {
    let body: unknown
    try {
      body = await c.req.json()
    } catch {
      throw new HTTPException(400, { res: Response.json({ error: 'body is not valid JSON' }, { status: 400 }) })
    }
    if (typeof body !== 'object' || body === null || Array.isArray(body)) {
      throw new HTTPException(400, { res: Response.json({ error: 'body must be a JSON object' }, { status: 400 }) })
    }
    return body as Record<string, unknown>
  }
  if (type.startsWith('application/x-www-form-urlencoded') || type.startsWith('multipart/form-data')) {
    const form = await c.req.parseBody()
    const out: Record<string, unknown> = {}
    for (const [k, v] of Object.entries(form)) if (k !== CSRF_FIELD && typeof v === 'string') out[k] = v
    return out
  }
  if (type === '' && c.req.raw.body === null) return {}
  throw new HTTPException(415, { res: Response.json({ error: 'send application/json or a form' }, { status: 415 }) })
}

/** The outcome as a notice on the page. */
export function writeResult(o: WriteOutcome): Html {
  return o.status === 200 ? notice('ok', o.message) : html`<p class="notice notice-error" role="alert"><strong>Not done:</strong> ${o.message}</p>`
}
