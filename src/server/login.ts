/**
 * @module server/login
 * Signing a browser in with the token (once; the cookie then carries a derived value, never the
 * token) and out again. POST /login is covered by the csrf middleware's origin check like any form.
 */
import type { Hono, MiddlewareHandler } from 'hono'
import { deleteCookie, setCookie } from 'hono/cookie'
import { html } from 'hono/html'
import type { Ctx, Deps, Env } from './deps.ts'
import { notice, page, type Html } from './layout.ts'
import { SESSION_COOKIE, localPath, newSessionValue, safeEqual } from './security.ts'

const SESSION_SECONDS = 12 * 3600

function loginPage(c: Ctx, next: string, tokenConfigured: boolean, error?: string): Html {
  const body = html`${error ? html`<p class="notice notice-error" role="alert"><strong>Not signed in:</strong> ${error}</p>` : ''}
${tokenConfigured
    ? html`<p>Changes (accepting terms, snoozing flags) need the dashboard token from tides.config.json or the TIDES_TOKEN environment variable. Reading needs no sign-in.</p>
<form method="post" action="/login" class="login">
<input type="hidden" name="next" value="${next}">
<label for="token">Token</label> <input id="token" name="token" type="password" autocomplete="current-password" required>
<button type="submit">Sign in</button></form>`
    : notice('warn', 'No token is configured, so the dashboard is read-only. Run `tides init` (prints a token once) or set TIDES_TOKEN, then restart `tides serve`.')}`
  return page({ title: 'Sign in', session: c.get('session'), path: '/login', body })
}

export function mountLogin(app: Hono<Env>, deps: Deps, guard: MiddlewareHandler<Env>): void {
  const token = () => deps.config.server.token
  app.get('/login', (c) => c.html(loginPage(c, localPath(c.req.query('next')), Boolean(token()))))
  app.post('/login', async (c) => {
    const form = await c.req.parseBody()
    const next = localPath(typeof form['next'] === 'string' ? form['next'] : undefined)
    const expected = token()
    if (!expected) return c.html(loginPage(c, next, false), 403)
    const given = typeof form['token'] === 'string' ? form['token'] : ''
    if (!given || !safeEqual(given, expected)) return c.html(loginPage(c, next, true, 'wrong token'), 401)
    setCookie(c, SESSION_COOKIE, newSessionValue(expected), {
      httpOnly: true,
      sameSite: 'Strict',
      path: '/',
      secure: new URL(c.req.url).protocol === 'https:',
      maxAge: SESSION_SECONDS,
    })
    return c.redirect(next, 303)
  })
  app.post('/logout', guard, (c) => {
    deleteCookie(c, SESSION_COOKIE, { path: '/' })
    return c.redirect('/', 303)
  })
}
