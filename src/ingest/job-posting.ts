/**
 * @module ingest/job-posting
 * schema.org JobPosting (https://schema.org/JobPosting) to a document: `identifier`, `title`,
 * `description` (HTML allowed), `datePosted`, `skills` (Text or DefinedTerm, one or many),
 * `occupationalCategory` (Text or CategoryCode), `hiringOrganization`, `jobLocation`. Also finds a
 * JobPosting embedded as JSON-LD (`<script type="application/ld+json">`) in an item's HTML.
 */
import { parsePostingDate } from './dates.ts'
import { type DocumentInput, ItemError, LIMITS } from './document.ts'
import { contentId, htmlToText } from './text.ts'

type Json = null | boolean | number | string | Json[] | { [key: string]: Json }
type JsonObject = { [key: string]: Json }

function isObject(v: unknown): v is JsonObject {
  return typeof v === 'object' && v !== null && !Array.isArray(v)
}

function types(obj: JsonObject): string[] {
  const t = obj['@type']
  const list = Array.isArray(t) ? t : [t]
  return list.filter((x): x is string => typeof x === 'string').map((x) => x.replace(/^(?:https?:\/\/)?schema\.org\//, ''))
}

/** A plain string from Text, a number, or an object's name/value fields. */
function textOf(v: Json | undefined, field: string, keys: readonly string[] = ['name']): string | null {
  if (v === undefined || v === null) return null
  if (typeof v === 'string') return v.trim() || null
  if (typeof v === 'number' || typeof v === 'boolean') return String(v)
  if (Array.isArray(v)) {
    // nested arrays are not schema.org and would only invite deep recursion: ignored
    const parts = v.filter((x) => !Array.isArray(x)).map((x) => textOf(x, field, keys)).filter((x): x is string => x !== null)
    return parts.length ? parts[0]! : null
  }
  for (const k of keys) {
    const inner = v[k]
    if (typeof inner === 'string' && inner.trim()) return inner.trim()
    if (typeof inner === 'number') return String(inner)
  }
  return null
}

function identifierOf(v: Json | undefined): string | null {
  if (v === undefined || v === null) return null
  if (Array.isArray(v)) return identifierOf(v[0])
  if (typeof v === 'string' || typeof v === 'number') return String(v).trim() || null
  if (isObject(v)) {
    // PropertyValue: the issuer (propertyID or name) keeps ids of different issuers apart
    const value = textOf(v['value'], 'identifier', [])
    if (value === null) return null
    const issuer = textOf(v['propertyID'], 'identifier', []) ?? textOf(v['name'], 'identifier', [])
    return issuer ? `${issuer}:${value}` : value
  }
  return null
}

/** `skills`: Text (a list in one string is split on , ; | or line breaks) or DefinedTerm, one or many. */
export function skillsOf(v: Json | undefined): string[] | null {
  if (v === undefined || v === null) return null
  const out: string[] = []
  // a plain loop, no inner function: this runs once per posting
  const list = Array.isArray(v) ? v : [v]
  for (const x of list) {
    if (typeof x === 'string') {
      for (const part of x.split(/[,;|\n]/)) {
        const s = part.trim()
        if (s) out.push(s)
      }
    } else if (isObject(x)) {
      const name = textOf(x, 'skills', ['name', 'termCode'])
      if (name) out.push(name)
    }
  }
  const unique = [...new Set(out)].slice(0, 200)
  for (const s of unique) if (s.length > LIMITS.skills) throw new ItemError('skills', `an entry is longer than ${LIMITS.skills} characters`)
  return unique.length ? unique : null
}

function placeOf(v: Json | undefined): string | null {
  if (v === undefined || v === null) return null
  if (typeof v === 'string') return v.trim() || null
  if (Array.isArray(v)) {
    const parts = v.filter((x) => !Array.isArray(x)).map(placeOf).filter((x): x is string => x !== null)
    return parts.length ? parts.join(' / ') : null
  }
  if (!isObject(v)) return null
  const address = v['address']
  if (typeof address === 'string') return address.trim() || null
  if (isObject(address)) {
    const parts = ['addressLocality', 'addressRegion', 'addressCountry'].map((k) => textOf(address[k], k)).filter((x): x is string => x !== null)
    if (parts.length) return parts.join(', ')
  }
  return textOf(v['name'], 'jobLocation', [])
}

export interface PostingOptions {
  /** used when the posting has no usable datePosted; null = such a posting is an error */
  fallbackDate: string | null
  now?: number
}

/**
 * Maps a JobPosting object to a document.
 * @throws ItemError naming the field that cannot be used
 */
export function postingFromJsonLd(obj: unknown, opts: PostingOptions): DocumentInput {
  if (!isObject(obj)) throw new ItemError(undefined, 'not a JSON object')
  const t = types(obj)
  if (t.length && !t.includes('JobPosting')) throw new ItemError('@type', `is ${t.join(', ')}, not JobPosting`)
  for (const f of ['title', 'description'] as const) {
    const v = obj[f]
    if (v !== undefined && v !== null && typeof v !== 'string') throw new ItemError(f, 'is not text')
  }
  const title = htmlToText((obj['title'] as string | undefined) ?? '')
  const body = htmlToText((obj['description'] as string | undefined) ?? '')
  let postedAt: string
  let dateEstimated = false
  const rawDate = obj['datePosted']
  if (rawDate === undefined || rawDate === null || rawDate === '') {
    if (opts.fallbackDate === null) throw new ItemError('datePosted', 'is missing')
    postedAt = opts.fallbackDate
    dateEstimated = true
  } else {
    const parsed = typeof rawDate === 'string' ? parsePostingDate(rawDate, opts.now) : { ok: false as const, reason: 'is not text' }
    if (parsed.ok) postedAt = parsed.iso
    else if (opts.fallbackDate !== null) {
      postedAt = opts.fallbackDate
      dateEstimated = true
    } else throw new ItemError('datePosted', parsed.reason)
  }
  const externalId = identifierOf(obj['identifier']) ?? textOf(obj['url'], 'url', []) ?? contentId(title, body, postedAt)
  const remote = obj['jobLocationType'] === 'TELECOMMUTE' ? 'remote' : null
  return {
    externalId,
    kind: 'posting',
    title,
    body,
    postedAt,
    dateEstimated,
    skills: skillsOf(obj['skills']),
    occupation: textOf(obj['occupationalCategory'], 'occupationalCategory', ['name', 'codeValue']),
    organisation: textOf(obj['hiringOrganization'], 'hiringOrganization'),
    location: placeOf(obj['jobLocation']) ?? remote,
  }
}

const LD_SCRIPT = /<script\b[^>]*\btype\s*=\s*["']?application\/ld\+json["']?[^>]*>([\s\S]*?)<\/script\s*>/gi

/**
 * Finds a JobPosting in the JSON-LD blocks of an HTML fragment.
 * @returns the posting (or null), the HTML without the JSON-LD blocks, and a reason when a block was unreadable
 */
export function extractJsonLdPosting(html: string): { posting: JsonObject | null; html: string; error: string | null } {
  if (!html.includes('ld+json')) return { posting: null, html, error: null }
  let posting: JsonObject | null = null
  let error: string | null = null
  const rest = html.replace(LD_SCRIPT, (_m, json: string) => {
    if (posting) return ' '
    try {
      posting = findPosting(JSON.parse(json.replace(/^\s*<!\[CDATA\[|\]\]>\s*$/g, '')) as Json)
    } catch (err) {
      error = `embedded JSON-LD is not valid JSON: ${(err as Error).message}`
    }
    return ' '
  })
  return { posting, html: rest, error }
}

function findPosting(v: Json): JsonObject | null {
  if (Array.isArray(v)) {
    for (const x of v) {
      const p = isObject(x) ? findPosting(x) : null
      if (p) return p
    }
    return null
  }
  if (!isObject(v)) return null
  if (types(v).includes('JobPosting')) return v
  const graph = v['@graph']
  return Array.isArray(graph) ? findPosting(graph) : null
}
