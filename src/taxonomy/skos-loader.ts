/**
 * @module taxonomy/skos-loader
 * Reads a SKOS taxonomy written in Turtle (W3C SKOS Reference, 2009) into concept records with the
 * n3 parser. Read: `skos:Concept` resources, `skos:prefLabel`, `skos:altLabel`, `skos:hiddenLabel`,
 * `skos:broader`/`skos:broaderTransitive` and their inverses `skos:narrower`/`skos:narrowerTransitive`.
 * The skill type comes from a `dcterms:type "soft"|"hard"` literal, else from the nearest typed
 * broader concept, else `hard`. Concept ids are the IRI's local name (after the last `#` or `/`)
 * when that is unique, otherwise the full IRI. Lines are those of the statement that carried each
 * triple (n3 reports the line where the statement ended).
 */
import type { Quad } from 'n3'
import type { ConceptRecord, Problem, SkillType } from './types.ts'
import type { RecordsResult } from './csv-loader.ts'

const SKOS = 'http://www.w3.org/2004/02/skos/core#'
const RDF_TYPE = 'http://www.w3.org/1999/02/22-rdf-syntax-ns#type'
const DCT_TYPE = 'http://purl.org/dc/terms/type'

interface Draft {
  iri: string
  line: number
  typed: boolean
  pref: { value: string; lang: string; line: number }[]
  alt: string[]
  hidden: string[]
  broader: string[]
  type?: SkillType
}

/** Language tags taken as the preferred language for `prefLabel` (untagged first, then English). */
function languageRank(lang: string): number {
  if (lang === '') return 0
  if (lang === 'en' || lang.startsWith('en-')) return 1
  return 2
}

/**
 * Parses SKOS Turtle text into concept records (asynchronous: n3 delivers quads in a microtask).
 * @param text Turtle source
 * @param file name used in problems
 * @example
 * await parseSkosTurtle('@prefix skos: <http://www.w3.org/2004/02/skos/core#> . <http://x/go> a skos:Concept ; skos:prefLabel "Go"@en .', 't.ttl')  // .records[0].id
 * // => 'go'
 */
export async function parseSkosTurtle(text: string, file: string): Promise<RecordsResult> {
  const problems: Problem[] = []
  const drafts = new Map<string, Draft>()
  const draft = (iri: string, line: number): Draft => {
    let d = drafts.get(iri)
    if (!d) {
      d = { iri, line, typed: false, pref: [], alt: [], hidden: [], broader: [] }
      drafts.set(iri, d)
    }
    return d
  }
  // n3 is loaded here, on the first SKOS file (most runs read none). It parses a string with a
  // callback asynchronously (in a microtask), delivering the quads before a syntax error and then
  // the error; the lexer's current line is the line of the statement's end when a quad is delivered.
  const { Parser } = await import('n3')
  const parser = new Parser()
  const lexer = (parser as unknown as { _lexer: { _line: number } })._lexer
  const onQuad = (quad: Quad): void => {
    const line = lexer._line
    const s = quad.subject.value
    const p = quad.predicate.value
    const o = quad.object
    if (p === RDF_TYPE && o.value === `${SKOS}Concept`) {
      draft(s, line).typed = true
      return
    }
    if (!p.startsWith(SKOS) && p !== DCT_TYPE) return
    const local = p.startsWith(SKOS) ? p.slice(SKOS.length) : 'dcterms:type'
    const isLabel = local === 'prefLabel' || local === 'altLabel' || local === 'hiddenLabel'
    if (isLabel || local === 'dcterms:type') {
      if (o.termType !== 'Literal') {
        problems.push({ file, line, field: `skos:${local}`, message: `object of ${local} on <${s}> is not a literal; ignored`, severity: 'error' })
        return
      }
      const value = o.value.trim()
      if (!value) {
        problems.push({ file, line, field: `skos:${local}`, message: `empty ${local} on <${s}>; ignored`, severity: 'warning' })
        return
      }
      const d = draft(s, line)
      if (local === 'prefLabel') d.pref.push({ value, lang: o.language.toLowerCase(), line })
      else if (local === 'altLabel') d.alt.push(value)
      else if (local === 'hiddenLabel') d.hidden.push(value)
      else {
        const t = value.toLowerCase()
        if (t === 'soft' || t === 'hard') d.type = t
        else problems.push({ file, line, field: 'dcterms:type', message: `type "${value}" on <${s}> is neither hard nor soft; ignored`, severity: 'warning' })
      }
      return
    }
    if (local === 'broader' || local === 'broaderTransitive') {
      if (o.termType !== 'NamedNode') return
      draft(s, line).broader.push(o.value)
    } else if (local === 'narrower' || local === 'narrowerTransitive') {
      if (o.termType !== 'NamedNode') return
      draft(o.value, line).broader.push(s)
    }
  }
  await new Promise<void>((resolve) => {
    const syntaxError = (err: Error & { context?: { line?: number } }): void => {
      problems.push({ file, line: err.context?.line ?? lexer._line, message: `Turtle syntax error, rest of file skipped: ${err.message}`, severity: 'error' })
    }
    try {
      parser.parse(text, (err, quad) => {
        if (err) {
          syntaxError(err)
          resolve()
        } else if (quad) onQuad(quad)
        else resolve()
      })
    } catch (err) {
      syntaxError(err as Error)
      resolve()
    }
  })

  // ids: the local name when unique among concepts, else the full IRI
  const concepts = [...drafts.values()].filter((d) => d.typed || d.pref.length > 0)
  const localCount = new Map<string, number>()
  for (const d of concepts) localCount.set(localName(d.iri), (localCount.get(localName(d.iri)) ?? 0) + 1)
  const idOf = new Map<string, string>()
  for (const d of concepts) {
    const l = localName(d.iri)
    idOf.set(d.iri, l && localCount.get(l) === 1 ? l : d.iri)
  }

  const records: ConceptRecord[] = []
  for (const d of concepts) {
    const id = idOf.get(d.iri) ?? d.iri
    if (!d.typed) problems.push({ file, line: d.line, field: 'rdf:type', message: `<${d.iri}> has labels but is not typed skos:Concept; read as a concept`, severity: 'warning' })
    if (d.pref.length === 0) {
      problems.push({ file, line: d.line, field: 'skos:prefLabel', message: `concept <${d.iri}> has no prefLabel; skipped`, severity: 'error' })
      continue
    }
    const pref = [...d.pref].sort((a, b) => languageRank(a.lang) - languageRank(b.lang))
    const chosen = pref[0]!
    const alt = [...d.alt]
    const byLang = new Map<string, number>()
    for (const p of d.pref) {
      byLang.set(p.lang, (byLang.get(p.lang) ?? 0) + 1)
      if (p !== chosen && p.value !== chosen.value) alt.push(p.value)
    }
    for (const [lang, n] of byLang) {
      if (n > 1) {
        problems.push({ file, line: d.line, field: 'skos:prefLabel', message: `concept <${d.iri}> has ${n} prefLabels${lang ? `@${lang}` : ' without language'} (SKOS Reference S14 allows one per language); extra ones read as altLabels`, severity: 'warning' })
      }
    }
    records.push({
      id,
      prefLabel: chosen.value,
      altLabels: alt,
      hiddenLabels: d.hidden,
      broader: d.broader.map((b) => idOf.get(b) ?? b),
      type: d.type ?? 'hard',
      source: { file, line: d.line },
    })
  }
  inheritTypes(records, new Map(concepts.map((d) => [idOf.get(d.iri) ?? d.iri, d.type])))
  return { records, problems }
}

/** Concepts without their own dcterms:type take the type of their nearest typed ancestor. */
function inheritTypes(records: ConceptRecord[], declared: Map<string, SkillType | undefined>): void {
  const byId = new Map(records.map((r) => [r.id, r]))
  const resolved = new Map<string, SkillType | undefined>()
  const resolve = (id: string, guard: Set<string>): SkillType | undefined => {
    if (resolved.has(id)) return resolved.get(id)
    const own = declared.get(id)
    if (own) return own
    const r = byId.get(id)
    if (!r || guard.has(id)) return undefined
    guard.add(id)
    let found: SkillType | undefined
    for (const b of r.broader) {
      found = resolve(b, guard)
      if (found) break
    }
    resolved.set(id, found)
    return found
  }
  for (const r of records) r.type = resolve(r.id, new Set()) ?? 'hard'
}

function localName(iri: string): string {
  const cut = Math.max(iri.lastIndexOf('#'), iri.lastIndexOf('/'))
  return decodeURIComponent(iri.slice(cut + 1))
}
