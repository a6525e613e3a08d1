import { beforeAll, describe, expect, it } from 'vitest'
import { parse } from 'csv-parse/sync'
import { excerpt } from '../../src/server/pages/skill.ts'
import { bearer, makeApp, postJson, signIn, type TestApp } from './helpers.ts'
import { XSS_PAYLOADS, escapeHtml } from './xss-payloads.ts'

/**
 * Every literal "<" in the page must open a tag the templates wrote (text is escaped), so the tags
 * can be listed with a regular expression; none may carry an event handler, a javascript: URL, or
 * be an element the templates never write.
 */
function checkTags(body: string): void {
  const allowed = new Set([
    'html', 'head', 'meta', 'title', 'link', 'script', 'body', 'a', 'header', 'nav', 'ul', 'ol', 'li', 'div', 'form', 'input', 'span', 'button', 'main',
    'h1', 'h2', 'h3', 'p', 'section', 'table', 'caption', 'thead', 'tbody', 'tr', 'th', 'td', 'small', 'strong', 'br', 'svg', 'title', 'polyline',
    'circle', 'select', 'option', 'label', 'dl', 'dt', 'dd', 'figure', 'figcaption', 'details', 'summary', 'article', 'footer', 'datalist', 'aside',
  ])
  const tags = [...body.matchAll(/<([a-zA-Z][\w-]*)([^>]*)>/g)]
  for (const [whole, name, rawAttrs] of tags) {
    expect(allowed.has(name!.toLowerCase()), `unexpected element ${whole}`).toBe(true)
    // the templates quote every value with " and the escaper turns " in values into &quot;, so
    // attributes split cleanly into name="value" pairs; anything left over would be injected markup
    const attrs = rawAttrs!.replace(/\/$/, '').replace(/\s+$/, '')
    const pairs = [...attrs.matchAll(/\s+([a-zA-Z][\w:-]*)(?:="([^"]*)")?/g)]
    expect(pairs.map((p) => p[0]).join(''), whole).toBe(attrs)
    for (const [, attr, value] of pairs) {
      expect(attr!.toLowerCase().startsWith('on'), `event handler in ${whole}`).toBe(false)
      if (['href', 'src', 'action', 'formaction', 'xlink:href'].includes(attr!.toLowerCase())) {
        expect(value ?? '', whole).toMatch(/^(\/|#|\?)/) // only same-site paths
      }
    }
    if (name!.toLowerCase() === 'script') expect(attrs, whole).toMatch(/^ src="\/assets\/[\w./-]+" defer$/)
    if (name!.toLowerCase() === 'meta') expect(attrs, whole).not.toMatch(/http-equiv/i)
  }
  // every "<" is the start of one of those tags or a closing tag / doctype
  const opens = (body.match(/</g) ?? []).length
  const closes = (body.match(/<\/[a-zA-Z][\w-]*>/g) ?? []).length
  const doctype = (body.match(/<!doctype html>/gi) ?? []).length
  expect(opens).toBe(tags.length + closes + doctype)
}

let t: TestApp
let cookie: string
beforeAll(async () => {
  t = makeApp()
  cookie = (await signIn(t.app)).cookie
})

function plant(payload: string): void {
  const { db } = t
  db.transaction(() => {
    const latest = db.prepare("SELECT d.id FROM documents d JOIN mentions m ON m.document_id = d.id WHERE m.concept_id = 'kubernetes' ORDER BY d.posted_at DESC, d.id DESC LIMIT 1").pluck().get()
    db.prepare('UPDATE documents SET title = ?, body = ?, organisation = ? WHERE id = ?').run(payload, `Before ${payload} after`, payload, latest)
    db.prepare("UPDATE concepts SET pref_label = ? WHERE id = 'terraform'").run(payload)
    db.prepare("DELETE FROM labels WHERE concept_id = 'python' AND kind = 'alt'").run()
    db.prepare("INSERT INTO labels(concept_id, label, kind) VALUES ('python', ?, 'alt')").run(payload)
    db.prepare("UPDATE courses SET title = ?, owner = ? WHERE course_id = 'c-flash-101'").run(payload, payload)
    db.prepare("UPDATE candidate_terms SET examples_json = ? WHERE term = 'kube'").run(JSON.stringify([payload, { title: payload, snippet: payload }]))
    db.prepare("DELETE FROM candidate_terms WHERE term NOT IN ('agent orchestration', 'kube', 'synergy')").run()
    db.prepare("INSERT INTO candidate_terms(term, score, recent_df, earlier_df) VALUES (?, 1, 1, 0)").run(payload)
    db.prepare("UPDATE job_runs SET error = ? WHERE status = 'failed'").run(payload)
    db.prepare("UPDATE webhook_deliveries SET last_error = ?").run(payload)
    db.prepare("UPDATE events SET payload_json = ? WHERE type = 'documents.ingested'").run(JSON.stringify({ source: payload }))
    db.prepare("UPDATE people SET team = ? WHERE person_id = 'd0'").run(payload)
  })()
}

describe('external text on every page is inert (OWASP filter-evasion payloads)', () => {
  it.each(XSS_PAYLOADS)('%s', async (payload) => {
    plant(payload)
    const pages: [string, string[]][] = [
      ['/', [payload]], // terraform label, team filter option
      ['/skills/kubernetes', [payload, excerpt(`Before ${payload} after`)]],
      ['/skills/python', [payload]],
      ['/courses', [payload]],
      ['/taxonomy', [payload]],
      ['/sources', [payload]],
    ]
    for (const [path, expected] of pages) {
      const res = await t.app.request(path, { headers: { Cookie: cookie } })
      expect(res.status, path).toBe(200)
      const body = await res.text()
      for (const text of expected) expect(body, `${path} shows the text escaped`).toContain(escapeHtml(text))
      if (/[<>"']/.test(payload)) expect(body, `${path} never carries the raw payload`).not.toContain(payload)
      checkTags(body)
    }
  })

  it('the tag check itself catches raw markup (so the checks above can fail)', () => {
    expect(() => checkTags('<p>fine</p>')).not.toThrow()
    for (const raw of ['<p><img src=x onerror=alert(1)></p>', '<p><script>alert(1)</script></p>', '<a href="javascript:alert(1)">x</a>', '<p title="x" onclick="y">z</p>', '<iframe src="/x"></iframe>']) {
      expect(() => checkTags(raw), raw).toThrow()
    }
  })

  it('JSON carries the text verbatim (JSON-encoded, served as application/json with nosniff)', async () => {
    const payload = XSS_PAYLOADS[1]!
    plant(payload)
    const res = await t.app.request('/api/skills/kubernetes/postings')
    expect(res.headers.get('content-type')).toMatch(/^application\/json/)
    expect(res.headers.get('x-content-type-options')).toBe('nosniff')
    const rows = (await res.json()) as { title: string }[]
    expect(rows[0]!.title).toBe(payload)
  })

  it('CSV carries the text verbatim but neutralises spreadsheet formulas', async () => {
    plant('=HYPERLINK("http://xss.invalid","click")')
    const rows = parse(await (await t.app.request('/api/skills/kubernetes/postings?format=csv')).text(), { columns: true }) as Record<string, string>[]
    expect(rows[0]!['title']).toBe('\'=HYPERLINK("http://xss.invalid","click")')
    const terms = parse(await (await t.app.request('/api/taxonomy?format=csv')).text(), { columns: true }) as Record<string, string>[]
    expect(terms.some((r) => r['term'] === '\'=HYPERLINK("http://xss.invalid","click")')).toBe(true)
  })

  it('a skill id that is itself a payload is percent-encoded in links and escaped in text', async () => {
    const id = '"><script>alert(1)</script>'
    t.db.prepare("INSERT INTO concepts(id, pref_label, type) VALUES (?, 'javascript:alert(1)', 'hard')").run(id)
    const body = await (await t.app.request('/?q=javascript')).text()
    expect(body).toContain(`href="/skills/${encodeURIComponent(id)}"`)
    checkTags(body)
    const page = await t.app.request(`/skills/${encodeURIComponent(id)}`)
    expect(page.status).toBe(200)
    checkTags(await page.text())
  })

  it('a refused write echoes its input only escaped', async () => {
    const res = await postJson(t.app, '/api/taxonomy/decide', { term: '<img src=x onerror=alert(1)>', action: 'new' }, bearer())
    expect(res.status).toBe(404)
    expect(res.headers.get('content-type')).toMatch(/^application\/json/)
  })
})
