/**
 * @module ingest/feed
 * RSS 2.0 and Atom (RFC 4287) feeds through rss-parser, hardened for hostile input:
 * - an HTML page is refused with that reason, not parsed as a feed;
 * - a DOCTYPE is removed before parsing, so no entity declared in it is ever expanded and no
 *   external DTD or entity is fetched (rss-parser's xml2js/sax never fetch, and strict sax rejects
 *   undeclared entities; removing the DTD keeps both facts true whatever their versions do);
 * - a feed that is not well-formed is read again item by item, so one broken item, a truncated
 *   body or an entity bomb in one item costs that item only, with the reason recorded.
 */
import type Parser from 'rss-parser'
import { parsePostingDate } from './dates.ts'
import { type DocumentInput, ItemError, type ItemProblem } from './document.ts'
import { extractJsonLdPosting, postingFromJsonLd } from './job-posting.ts'
import { contentId, htmlToText } from './text.ts'

export interface FeedReadResult {
  format: 'rss' | 'atom' | null
  items: { line?: number; doc: DocumentInput }[]
  /** rejected items and caveats on stored ones */
  problems: ItemProblem[]
  /** why nothing at all could be read, or null */
  fatal: string | null
}

interface RawItem {
  [key: string]: unknown
  title?: unknown
  link?: unknown
  guid?: unknown
  id?: unknown
  pubDate?: unknown
  published?: unknown
  updated?: unknown
  content?: unknown
  summary?: unknown
  'content:encoded'?: unknown
  'dc:date'?: unknown
}

interface AtomHook {
  parseItemAtom(entry: Record<string, unknown>): RawItem
}

/** rss-parser (and the XML libraries under it) loaded on the first feed: most runs read none */
async function makeParser(): Promise<Parser<Record<string, unknown>, RawItem>> {
  const { default: RssParser } = await import('rss-parser')
  const parser = new RssParser<Record<string, unknown>, RawItem>({ customFields: { item: ['id'] } })
  // rss-parser turns Atom published/updated into ISO strings with `new Date(x).toISOString()`, which
  // throws on a bad date and would fail the whole feed; keep the raw strings and judge them here
  const hook = parser as unknown as AtomHook
  const original = hook.parseItemAtom.bind(parser)
  hook.parseItemAtom = (entry) => {
    const { published, updated, ...rest } = entry
    const item = original(rest)
    item.published = firstText(published)
    item.updated = firstText(updated)
    return item
  }
  return parser
}

function firstText(v: unknown): string | undefined {
  const x = Array.isArray(v) ? v[0] : v
  if (typeof x === 'string') return x
  if (x && typeof x === 'object' && typeof (x as { _?: unknown })._ === 'string') return (x as { _: string })._
  return undefined
}

function str(v: unknown): string | null {
  const t = firstText(v)
  return t === undefined ? null : t.trim() || null
}

const HTML_PAGE = /^\s*(?:<\?xml[^>]*>\s*)?(?:<!--[\s\S]*?-->\s*)*<(?:!doctype\s+html|html)[\s>]/i
const DOCTYPE = /<!DOCTYPE\b(?:[^[>"']|"[^"]*"|'[^']*')*(?:\[[\s\S]*?\]\s*)?>/i

/** Removes the DOCTYPE (keeping line numbers); says whether it declared entities. */
export function stripDoctype(xml: string): { xml: string; declaredEntities: boolean; removed: boolean } {
  const m = DOCTYPE.exec(xml)
  if (!m) {
    // an unterminated DOCTYPE (a truncated entity bomb) is cut to the end: nothing after it is XML we want
    const open = /<!DOCTYPE\b/i.exec(xml)
    if (!open) return { xml, declaredEntities: false, removed: false }
    return { xml: xml.slice(0, open.index), declaredEntities: /<!ENTITY/i.test(xml.slice(open.index)), removed: true }
  }
  const lines = m[0].split('\n').length - 1
  return { xml: xml.slice(0, m.index) + '\n'.repeat(lines) + xml.slice(m.index + m[0].length), declaredEntities: /<!ENTITY/i.test(m[0]), removed: true }
}

/** offsets of the line breaks of the last text asked about (one feed is read at a time) */
let breaks: { text: string; at: number[] } | null = null

/**
 * Offsets of the item (or entry) start tags, skipping those inside complete comments. CDATA is not
 * skipped: a stray "<![CDATA[" in damaged input would otherwise hide every item up to the next "]]>".
 */
function itemStarts(xml: string, tag: string): number[] {
  const re = new RegExp(`<!--[\\s\\S]*?-->|<${tag}[\\s>]`, 'g')
  return [...xml.matchAll(re)].filter((m) => m[0].startsWith(`<${tag}`)).map((m) => m.index!)
}

/** Comments replaced by spaces (line breaks kept), so that markup inside them is not taken for items. */
function maskComments(xml: string): string {
  return xml.replace(/<!--[\s\S]*?-->/g, (m) => m.replace(/[^\n]/g, ' '))
}

/** 1-based line of `offset`, by binary search over the text's line breaks (found once per text). */
function lineAt(text: string, offset: number): number {
  if (breaks?.text !== text) {
    const at: number[] = []
    for (let i = text.indexOf('\n'); i !== -1; i = text.indexOf('\n', i + 1)) at.push(i)
    breaks = { text, at }
  }
  const at = breaks.at
  let lo = 0
  let hi = at.length
  while (lo < hi) {
    const mid = (lo + hi) >>> 1
    if (at[mid]! < offset) lo = mid + 1
    else hi = mid
  }
  return lo + 1
}

/**
 * Reads a feed body into documents.
 * @param file the URL or path, for messages
 * @param fetchedAt ISO time of the fetch: the date of items that carry none (counted as estimated)
 */
export async function readFeed(text: string, file: string, fetchedAt: string, contentType?: string | null): Promise<FeedReadResult> {
  const problems: ItemProblem[] = []
  if (HTML_PAGE.test(text) || (/text\/html/i.test(contentType ?? '') && !/^\s*<\?xml|<(rss|feed)\b/i.test(text.slice(0, 2000)))) {
    return { format: null, items: [], problems, fatal: 'the response is an HTML page, not an RSS or Atom feed' }
  }
  const stripped = stripDoctype(text)
  if (stripped.declaredEntities) {
    problems.push({ file, line: 1, reason: 'the DOCTYPE declares entities; it was removed unexpanded (entity-expansion and external-entity payloads are never processed)', warning: true })
  }
  const xml = stripped.xml
  const root = /<(rss|feed|rdf:RDF)\b([^>]*)>/i.exec(xml)
  const format = root ? (root[1]!.toLowerCase() === 'feed' ? 'atom' : 'rss') : null
  const tag = format === 'atom' ? 'entry' : 'item'
  const starts = itemStarts(xml, tag)
  let raw: RawItem[]
  try {
    const feed = await (await makeParser()).parseString(xml)
    raw = feed.items
  } catch (err) {
    const reason = (err as Error).message.replace(/\s+/g, ' ').trim()
    if (!root) return { format: null, items: [], problems, fatal: `not an RSS or Atom feed: ${reason}` }
    problems.push({ file, reason: `the feed is not well-formed XML (${reason}); items were read one by one`, warning: true })
    return recover(maskComments(xml), file, fetchedAt, format!, root[2] ?? '', problems)
  }
  const items: FeedReadResult['items'] = []
  raw.forEach((item, i) => {
    const line = raw.length === starts.length ? lineAt(xml, starts[i]!) : undefined
    addItem(item, format ?? 'rss', file, line, fetchedAt, items, problems)
  })
  return { format, items, problems, fatal: null }
}

async function recover(
  xml: string,
  file: string,
  fetchedAt: string,
  format: 'rss' | 'atom',
  rootAttributes: string,
  problems: ItemProblem[],
): Promise<FeedReadResult> {
  const namespaces = [...rootAttributes.matchAll(/\sxmlns(?::[\w.-]+)?\s*=\s*("[^"]*"|'[^']*')/g)].map((m) => m[0]).join('')
  const tag = format === 'atom' ? 'entry' : 'item'
  const items: FeedReadResult['items'] = []
  // each item runs from its start tag to the first end tag before the next item starts, so an item
  // whose end tag is damaged costs that item only, not the one after it too
  const starts = itemStarts(xml, tag)
  const close = new RegExp(`</${tag}\\s*>`, 'g')
  /** [start, end) of each item read up to its end tag, in order */
  const spans: [number, number][] = []
  for (let k = 0; k < starts.length; k++) {
    const start = starts[k]!
    const limit = k + 1 < starts.length ? starts[k + 1]! : xml.length
    const line = lineAt(xml, start)
    close.lastIndex = start
    const end = close.exec(xml)
    if (!end || end.index + end[0].length > limit) {
      problems.push({ file, line, reason: k + 1 < starts.length ? `an ${tag} has no end tag before the next ${tag} begins` : `an ${tag} is cut off (the body ends inside it)` })
      continue
    }
    spans.push([start, end.index + end[0].length])
    const text = xml.slice(start, end.index + end[0].length)
    const wrapped =
      format === 'atom' ? `<feed${namespaces.includes('xmlns=') ? '' : ' xmlns="http://www.w3.org/2005/Atom"'}${namespaces}>${text}</feed>` : `<rss version="2.0"${namespaces}><channel>${text}</channel></rss>`
    try {
      // a fresh parser each time: xml2js keeps state after an error, and a reused parser was seen
      // to let an undeclared entity through as literal text on the next document
      const feed = await (await makeParser()).parseString(wrapped)
      for (const item of feed.items) addItem(item, format, file, line, fetchedAt, items, problems)
    } catch (err) {
      problems.push({ file, line, reason: `item is not well-formed XML: ${(err as Error).message.replace(/\s+/g, ' ').replace(/ Line: \d+ Column: \d+ Char: .*$/, '').trim()}` })
    }
  }
  // an end tag outside every item above closes an item whose start tag was damaged: that item is
  // lost, and is reported like any other unreadable item (spans and end tags are both in order)
  let j = 0
  for (const m of xml.matchAll(new RegExp(close.source, 'g'))) {
    while (j < spans.length && spans[j]![1] <= m.index) j++
    if (j < spans.length && spans[j]![0] <= m.index) continue
    problems.push({ file, line: lineAt(xml, m.index), reason: `an ${tag} end tag without its start tag: the ${tag} it closes is damaged and was not read` })
  }
  return { format, items, problems, fatal: items.length === 0 && problems.every((p) => p.warning) ? `no readable ${tag} in the feed` : null }
}

function addItem(item: RawItem, format: 'rss' | 'atom', file: string, line: number | undefined, fetchedAt: string, items: FeedReadResult['items'], problems: ItemProblem[]): void {
  const id = str(item.guid) ?? str(item.id) ?? str(item.link)
  try {
    const { doc, warning } = feedItemToDocument(item, format, fetchedAt)
    items.push({ line, doc })
    if (warning) problems.push({ file, line, item: doc.externalId, field: warning.field, reason: warning.reason, warning: true })
  } catch (err) {
    if (!(err instanceof ItemError)) throw err
    problems.push({ file, line, item: id ?? undefined, field: err.field, reason: err.message })
  }
}

/**
 * Maps one parsed item to a document. An embedded JobPosting (JSON-LD) supplies the fields when
 * present; the item's guid/id (else link, else a content hash) stays its external id.
 */
export function feedItemToDocument(item: RawItem, format: 'rss' | 'atom', fetchedAt: string): { doc: DocumentInput; warning: { field: string; reason: string } | null } {
  const html = format === 'atom' ? (str(item.content) ?? str(item.summary) ?? '') : (str(item['content:encoded']) ?? str(item.content) ?? '')
  const ld = extractJsonLdPosting(html)
  const dateField = format === 'atom' ? (str(item.published) === null && str(item.updated) !== null ? 'updated' : 'published') : str(item.pubDate) === null && str(item['dc:date']) !== null ? 'dc:date' : 'pubDate'
  const rawDate = format === 'atom' ? (str(item.published) ?? str(item.updated)) : (str(item.pubDate) ?? str(item['dc:date']))
  let itemDate: string | null = null
  let dateProblem: string | null = null
  if (rawDate === null) dateProblem = 'no date'
  else {
    const parsed = parsePostingDate(rawDate)
    if (parsed.ok) itemDate = parsed.iso
    else dateProblem = parsed.reason
  }
  const itemId = str(item.guid) ?? str(item.id) ?? str(item.link)
  let doc: DocumentInput
  if (ld.posting) {
    // the JSON-LD datePosted wins when usable; else the item's date; else the fetch time
    doc = postingFromJsonLd(ld.posting, { fallbackDate: itemDate ?? fetchedAt })
    if (doc.dateEstimated) doc.dateEstimated = itemDate === null
    if (itemId) doc.externalId = itemId
    if (!doc.title) doc.title = htmlToText(str(item.title) ?? '')
    if (!doc.body) doc.body = htmlToText(ld.html)
  } else {
    const title = htmlToText(str(item.title) ?? '')
    const body = htmlToText(ld.html)
    doc = { externalId: itemId ?? contentId(title, body, rawDate), kind: 'posting', title, body, postedAt: itemDate ?? fetchedAt, dateEstimated: itemDate === null }
  }
  const warning = ld.error
    ? { field: 'description', reason: `${ld.error}; the item's own fields were used` }
    : doc.dateEstimated
      ? { field: dateField, reason: `${dateProblem ?? 'no usable date'}; the fetch time was used (counted as estimated)` }
      : null
  return { doc, warning }
}
