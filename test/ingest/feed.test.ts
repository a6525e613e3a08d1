import fs from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { parsePostingDate } from '../../src/ingest/dates.ts'
import { readFeed, stripDoctype } from '../../src/ingest/feed.ts'

const FIXTURES = path.join(import.meta.dirname, '..', 'fixtures', 'feeds')
const FETCHED = '2024-05-01T12:00:00.000Z'
const read = (name: string) => readFeed(fs.readFileSync(path.join(FIXTURES, name), 'utf8'), name, FETCHED)

describe('RSS 2.0 (fixture written from the RSS 2.0 specification, "Elements of <item>")', () => {
  it('maps items to documents: guid, else link, else a content hash; HTML stripped; RFC 822 dates', async () => {
    const feed = await read('rss2-spec.xml')
    expect(feed.fatal).toBeNull()
    expect(feed.format).toBe('rss')
    const docs = feed.items.map((i) => i.doc)
    expect(docs).toHaveLength(4)
    // <guid isPermaLink="false"> is the id (spec: "<guid> sub-element of <item>")
    expect(docs[0]).toMatchObject({ externalId: 'fernhollow-101', title: 'Warehouse data analyst', postedAt: '2002-09-07T00:00:01.000Z', dateEstimated: false })
    // escaped HTML in <description> becomes text; &amp;amp; is a literal "&amp;" in the HTML, i.e. "&"
    expect(docs[0]!.body).toBe('Build SQL reports & Python pipelines for the north depot.\nPower BI')
    // no guid: the link is the id; "+0200" is two hours ahead of UTC (RFC 822 section 5.1)
    expect(docs[1]).toMatchObject({ externalId: 'http://jobs.fernhollow.example/roles/102', postedAt: '2003-06-10T02:00:00.000Z' })
    expect(docs[1]!.body).toBe('Lead a team of six; negotiation and stakeholder management.')
    // two-digit year and EDT (UTC-4), both allowed by RFC 822 section 5.1
    expect(docs[2]).toMatchObject({ externalId: 'http://jobs.fernhollow.example/roles/103', title: '', postedAt: '2003-09-01T13:30:00.000Z' })
    // no pubDate: the fetch time stands in, counted as estimated and reported as a caveat
    expect(docs[3]).toMatchObject({ externalId: 'fernhollow-104', postedAt: FETCHED, dateEstimated: true })
    expect(feed.problems).toEqual([expect.objectContaining({ line: 34, field: 'pubDate', warning: true, reason: expect.stringContaining('no date') })])
    expect(feed.items.map((i) => i.line)).toEqual([16, 23, 29, 34])
  })
})

describe('Atom (fixture written from RFC 4287 sections 1.1, 3.3, 4.1.2, 4.2.6, 4.2.9, 4.2.15)', () => {
  it('uses atom:id, prefers published over updated, reads type="html" text constructs', async () => {
    const feed = await read('atom-rfc4287.xml')
    expect(feed.fatal).toBeNull()
    expect(feed.format).toBe('atom')
    const [a, b] = feed.items.map((i) => i.doc)
    expect(a).toMatchObject({
      externalId: 'urn:uuid:1225c695-cfb8-4ebb-aaaa-80da344efa6a',
      title: 'Cold-chain technician',
      body: 'Maintain refrigeration units; PLC troubleshooting and preventive maintenance.',
      postedAt: '2003-12-13T18:30:02.000Z',
      dateEstimated: false,
    })
    // published 08:15 at -05:00 is 13:15Z (RFC 3339 section 4.2); updated is not used when published exists
    expect(b).toMatchObject({ externalId: 'tag:example.org,2004:cloud-engineer', postedAt: '2004-01-05T13:15:00.000Z' })
    expect(b!.title).toBe('Cloud platform engineer')
    expect(b!.body).toBe("Terraform, Kubernetes and incident response for the co-op's shop systems.")
    expect(feed.problems).toEqual([])
  })

  it('a bad Atom date costs the date, not the entry (rss-parser alone would throw on it)', async () => {
    const xml = `<feed xmlns="http://www.w3.org/2005/Atom"><title>t</title><id>urn:f</id><updated>2003-12-13T18:30:02Z</updated>
<entry><title>ok</title><id>urn:1</id><published>2004-02-30T10:00:00Z</published><summary>Thirtieth of February.</summary></entry>
<entry><title>ok2</title><id>urn:2</id><updated>2004-02-03T10:00:00Z</updated><summary>Fine.</summary></entry></feed>`
    const feed = await readFeed(xml, 'bad.atom', FETCHED)
    expect(feed.items.map((i) => [i.doc.externalId, i.doc.postedAt, i.doc.dateEstimated])).toEqual([
      ['urn:1', FETCHED, true],
      ['urn:2', '2004-02-03T10:00:00.000Z', false],
    ])
    expect(feed.problems[0]).toMatchObject({ line: 2, field: 'published', warning: true, reason: expect.stringContaining('not a calendar date') })
  })
})

describe('embedded schema.org JobPosting (JSON-LD)', () => {
  it('prefers the JSON-LD fields and keeps the guid as the external id', async () => {
    const feed = await read('jobposting-jsonld.xml')
    const [a, b] = feed.items.map((i) => i.doc)
    expect(a).toMatchObject({
      externalId: 'fh-ld-1',
      title: 'Data platform engineer',
      body: 'Own the dbt models and Airflow jobs.',
      postedAt: '2022-01-03T00:00:00.000Z',
      dateEstimated: false,
      skills: ['dbt', 'Apache Airflow', 'SQL'],
      occupation: 'Database Architects',
      organisation: 'Fernhollow Cooperative',
      location: 'Fernhollow, Westvale',
    })
    // JobPosting inside @graph, no datePosted: the item's pubDate is used (not estimated)
    expect(b).toMatchObject({ externalId: 'fh-ld-2', postedAt: '2022-01-06T10:00:00.000Z', dateEstimated: false, skills: ['route planning', 'radio dispatch'], location: 'remote' })
    expect(feed.problems).toEqual([])
  })

  it('an unreadable JSON-LD block is a caveat; the item keeps its own fields', async () => {
    const xml = `<rss version="2.0"><channel><title>t</title><item><guid>x1</guid><title>Baker</title><pubDate>Wed, 05 Jan 2022 10:00:00 GMT</pubDate>
<description><![CDATA[<p>Early shifts.</p><script type="application/ld+json">{"@type": "JobPosting", "title": </script>]]></description></item></channel></rss>`
    const feed = await readFeed(xml, 'x.xml', FETCHED)
    expect(feed.items[0]!.doc).toMatchObject({ externalId: 'x1', title: 'Baker', body: 'Early shifts.' })
    expect(feed.problems[0]).toMatchObject({ warning: true, reason: expect.stringContaining('not valid JSON') })
  })
})

describe('posting dates', () => {
  it('reads RFC 822 (RSS 2.0 spec example) and RFC 3339 and refuses loose forms Date.parse would accept', () => {
    expect(parsePostingDate('Sat, 07 Sep 2002 00:00:01 GMT')).toEqual({ ok: true, iso: '2002-09-07T00:00:01.000Z' })
    expect(parsePostingDate('2003-12-13T18:30:02Z')).toEqual({ ok: true, iso: '2003-12-13T18:30:02.000Z' })
    expect(parsePostingDate('2003-12-13T18:30:02.25+01:00')).toEqual({ ok: true, iso: '2003-12-13T17:30:02.250Z' })
    // Date.parse('1') is a date in 2001 in V8; here it is an error
    expect(Number.isNaN(Date.parse('1'))).toBe(false)
    for (const bad of ['1', 'May', 'yesterday', '2003-13-01', '31 Feb 2003 10:00 GMT', '1970-01-01T00:00:00Z', '2999-01-01']) {
      expect(parsePostingDate(bad, Date.parse('2024-01-01')).ok).toBe(false)
    }
  })
})

describe('DOCTYPE handling', () => {
  it('removes a DOCTYPE with its internal subset, keeping line numbers', () => {
    const xml = '<?xml version="1.0"?>\n<!DOCTYPE r [\n<!ENTITY a "b">\n]>\n<r/>'
    const out = stripDoctype(xml)
    expect(out.declaredEntities).toBe(true)
    expect(out.xml.split('\n')).toHaveLength(xml.split('\n').length)
    expect(out.xml).not.toContain('ENTITY')
  })
})
