/**
 * @module demo/writers
 * Writes demo postings as schema.org JobPosting JSON Lines (streamed, one file per aggregator) and as
 * RSS 2.0 / Atom feed files (one current feed per board plus archive pages of at most `feedPageSize`
 * items, linked the RFC 5005 way). One board's RSS items carry the posting as embedded JSON-LD.
 */
import fs from 'node:fs'
import path from 'node:path'
import { isoDate, isoSeconds, rfc822 } from './calendar.ts'
import type { Channel, Posting } from './postings.ts'
import { escapeXml, renderHtml, renderPlain } from './text.ts'

const DAY = 86_400_000

/** The schema.org JobPosting object of a posting. */
export function jobPostingObject(p: Posting, opts: { html: boolean; dateOnly: boolean }): Record<string, unknown> {
  const obj: Record<string, unknown> = {
    '@context': 'https://schema.org',
    '@type': 'JobPosting',
    identifier: p.identifier,
    title: p.title,
    description: opts.html ? renderHtml(p.parts) : renderPlain(p.parts),
    datePosted: opts.dateOnly ? isoDate(p.ms) : isoSeconds(p.ms),
    validThrough: isoDate(p.ms + 42 * DAY),
    employmentType: p.employment,
    hiringOrganization: { '@type': 'Organization', name: p.employer },
    jobLocation: { '@type': 'Place', address: { '@type': 'PostalAddress', addressLocality: p.place } },
    occupationalCategory: p.role.name,
    url: `${p.channel.site}/jobs/${p.identifier}`,
  }
  if (p.mode === 'remote') obj['jobLocationType'] = 'TELECOMMUTE'
  if (p.skillsField !== null) obj['skills'] = p.skillsField
  return obj
}

/**
 * The same JobPosting as JSON text, built directly: the generator writes tens of thousands of these,
 * and serialising strings one by one avoids an object tree per posting (same keys, same order).
 */
export function jobPostingJson(p: Posting, opts: { html: boolean; dateOnly: boolean }): string {
  const q = JSON.stringify
  let out =
    `{"@context":"https://schema.org","@type":"JobPosting","identifier":${q(p.identifier)},"title":${q(p.title)},` +
    `"description":${q(opts.html ? renderHtml(p.parts) : renderPlain(p.parts))},` +
    `"datePosted":"${opts.dateOnly ? isoDate(p.ms) : isoSeconds(p.ms)}","validThrough":"${isoDate(p.ms + 42 * DAY)}",` +
    `"employmentType":"${p.employment}","hiringOrganization":{"@type":"Organization","name":${q(p.employer)}},` +
    `"jobLocation":{"@type":"Place","address":{"@type":"PostalAddress","addressLocality":${q(p.place)}}},` +
    `"occupationalCategory":${q(p.role.name)},"url":${q(`${p.channel.site}/jobs/${p.identifier}`)}`
  if (p.mode === 'remote') out += ',"jobLocationType":"TELECOMMUTE"'
  if (p.skillsField !== null) out += `,"skills":${q(p.skillsField)}`
  return out + '}'
}

/** Streams JSON Lines to a file in blocks, so memory stays flat however many postings there are. */
export class JsonlWriter {
  private fd: number
  // appended strings form a rope that V8 flattens once per flush, cheaper than an array and a join
  private pending = ''
  count = 0

  constructor(readonly file: string) {
    fs.mkdirSync(path.dirname(file), { recursive: true })
    this.fd = fs.openSync(file, 'w')
  }

  /** Appends one line of JSON text (without its newline). */
  writeLine(json: string): void {
    this.pending += json + '\n'
    this.count++
    if (this.pending.length >= 1 << 20) this.flush()
  }

  private flush(): void {
    if (this.pending.length) fs.writeSync(this.fd, this.pending)
    this.pending = ''
  }

  close(): void {
    this.flush()
    fs.closeSync(this.fd)
  }
}

interface FeedItem {
  ms: number
  identifier: string
  xml: string
}

export interface FeedFile {
  channel: Channel
  /** file name under <dataDir>/feeds */
  name: string
  items: number
  /** true for the current page (newest items), false for archive pages */
  current: boolean
}

/** Collects a board's items and writes its feed pages newest first. */
export class FeedWriter {
  private items: FeedItem[] = []

  constructor(
    readonly channel: Channel,
    private readonly dir: string,
    private readonly pageSize: number,
  ) {}

  get extension(): string {
    return this.channel.format === 'atom' ? 'atom' : 'rss'
  }

  add(p: Posting): void {
    const xml = this.channel.format === 'atom' ? atomEntry(p) : rssItem(p, this.channel.format === 'rss-jsonld')
    this.items.push({ ms: p.ms, identifier: p.identifier, xml })
  }

  /** Writes the pages: `<board>.<ext>` holds the newest items, `<board>-archive-N.<ext>` older ones (N = 1 is the most recent archive). */
  finish(): FeedFile[] {
    fs.mkdirSync(this.dir, { recursive: true })
    this.items.sort((a, b) => b.ms - a.ms || (a.identifier < b.identifier ? 1 : -1))
    const pages: FeedItem[][] = []
    for (let i = 0; i < this.items.length; i += this.pageSize) pages.push(this.items.slice(i, i + this.pageSize))
    if (pages.length === 0) pages.push([])
    const nameOf = (page: number) => (page === 0 ? `${this.channel.id}.${this.extension}` : `${this.channel.id}-archive-${page}.${this.extension}`)
    return pages.map((items, page) => {
      const name = nameOf(page)
      const prev = page + 1 < pages.length ? nameOf(page + 1) : null
      const next = page > 0 ? nameOf(page - 1) : null
      const updated = items[0]?.ms ?? 0
      const head = this.channel.format === 'atom' ? atomHead(this.channel, updated, prev, next, page > 0) : rssHead(this.channel, updated, prev, next, page > 0)
      const tail = this.channel.format === 'atom' ? '</feed>\n' : '</channel>\n</rss>\n'
      fs.writeFileSync(path.join(this.dir, name), head + items.map((it) => it.xml).join('') + tail)
      return { channel: this.channel, name, items: items.length, current: page === 0 }
    })
  }
}

const HISTORY_NS = 'http://purl.org/syndication/history/1.0'

function rssHead(c: Channel, updated: number, prev: string | null, next: string | null, archive: boolean): string {
  const links = [
    prev ? `<atom:link rel="prev-archive" href="${prev}"/>` : '',
    next ? `<atom:link rel="next-archive" href="${next}"/>` : '',
    archive ? `<fh:archive/>` : '',
  ].join('')
  return (
    `<?xml version="1.0" encoding="UTF-8"?>\n` +
    `<rss version="2.0" xmlns:atom="http://www.w3.org/2005/Atom" xmlns:dc="http://purl.org/dc/elements/1.1/" xmlns:content="http://purl.org/rss/1.0/modules/content/" xmlns:fh="${HISTORY_NS}">\n<channel>\n` +
    `<title>${escapeXml(c.name)}${archive ? ' (archive)' : ''}</title>\n<link>${c.site}/</link>\n` +
    `<description>Job postings on ${escapeXml(c.name)}, a fictional job board of the skill-tides demo</description>\n` +
    `<language>en</language>\n<lastBuildDate>${rfc822(updated)}</lastBuildDate>\n<ttl>60</ttl>\n${links}\n`
  )
}

function rssItem(p: Posting, jsonld: boolean): string {
  const html = renderHtml(p.parts)
  let content = ''
  let description: string
  if (jsonld) {
    // this board puts a short summary in <description> and the full posting, with its JSON-LD, in content:encoded
    description = escapeXml(p.parts.intro)
    const embed = p.identifier.charCodeAt(p.identifier.length - 1) % 10 < 7
    const script = embed ? `<script type="application/ld+json">${jobPostingJson(p, { html: false, dateOnly: false }).replace(/</g, '\\u003c')}</script>` : ''
    content = `<content:encoded><![CDATA[${script}${html}]]></content:encoded>`
  } else {
    description = escapeXml(html)
  }
  return (
    `<item><title>${escapeXml(p.title)}</title><link>${p.channel.site}/jobs/${p.identifier}</link>` +
    `<guid isPermaLink="false">${p.identifier}</guid><pubDate>${rfc822(p.ms)}</pubDate>` +
    `<category>${escapeXml(p.role.name)}</category><dc:creator>${escapeXml(p.employer)}</dc:creator>` +
    `<description>${description}</description>${content}</item>\n`
  )
}

function atomHead(c: Channel, updated: number, prev: string | null, next: string | null, archive: boolean): string {
  const host = new URL(c.site).host
  return (
    `<?xml version="1.0" encoding="utf-8"?>\n<feed xmlns="http://www.w3.org/2005/Atom" xmlns:fh="${HISTORY_NS}">\n` +
    `<title>${escapeXml(c.name)}${archive ? ' (archive)' : ''}</title>\n<id>tag:${host},2020:feed</id>\n<updated>${isoSeconds(updated)}</updated>\n` +
    `<link rel="alternate" href="${c.site}/"/>\n` +
    (prev ? `<link rel="prev-archive" href="${prev}"/>\n` : '') +
    (next ? `<link rel="next-archive" href="${next}"/>\n` : '') +
    (archive ? '<fh:archive/>\n' : '') +
    `<author><name>${escapeXml(c.name)}</name></author>\n`
  )
}

function atomEntry(p: Posting): string {
  const host = new URL(p.channel.site).host
  const when = isoSeconds(p.ms)
  return (
    `<entry><id>tag:${host},2020:posting/${p.identifier}</id><title>${escapeXml(p.title)}</title>` +
    `<link rel="alternate" href="${p.channel.site}/jobs/${p.identifier}"/><published>${when}</published><updated>${when}</updated>` +
    `<author><name>${escapeXml(p.employer)}</name></author><category term="${escapeXml(p.role.name)}"/>` +
    `<content type="html">${escapeXml(renderHtml(p.parts))}</content></entry>\n`
  )
}
