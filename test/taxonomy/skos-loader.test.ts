import { describe, it, expect } from 'vitest'
import fs from 'node:fs'
import path from 'node:path'
import { loadTaxonomyFile, loadTaxonomyText, Matcher } from '../../src/taxonomy/index.ts'
import { parseSkosTurtle } from '../../src/taxonomy/skos-loader.ts'

const fixture = path.join(import.meta.dirname, 'fixtures/skos-reference-examples.ttl')
const HEAD = '@prefix skos: <http://www.w3.org/2004/02/skos/core#> .\n@prefix ex: <http://example.org/x#> .\n'

describe('SKOS Turtle import', async () => {
  // Labels after the W3C SKOS Reference §5.4 example (consistent graph: prefLabel "animals"@en,
  // altLabel "fauna"@en, hiddenLabel "aminals"@en, prefLabel "animaux"@fr, altLabel "faune"@fr);
  // the example's wording was read in the SKOS Lexical Labels wiki draft, its §5.4 place from memory.
  it('reads pref, alt and hidden labels; other-language prefLabels become altLabels (SKOS Reference §5.4)', async () => {
    const { taxonomy, problems } = await loadTaxonomyFile(fixture)
    expect(problems.filter((p) => p.severity === 'error')).toEqual([])
    const animals = taxonomy.byId.get('animals')!
    expect(animals.prefLabel).toBe('animals')
    expect(animals.altLabels.sort()).toEqual(['animaux', 'fauna', 'faune'])
    expect(animals.hiddenLabels).toEqual(['aminals'])
  })

  // §8.4: skos:broader and its inverse skos:narrower state the same hierarchy (from memory).
  it('reads broader, broaderTransitive and the inverse narrower as broader links (SKOS Reference §8.4)', async () => {
    const { taxonomy } = await loadTaxonomyFile(fixture)
    expect(taxonomy.byId.get('mammals')!.broader).toEqual(['animals'])
    expect(taxonomy.byId.get('pytorch')!.broader).toEqual(['deep-learning'])
    expect(taxonomy.byId.get('deep-learning')!.broader).toEqual(['machine-learning'])
  })

  it('takes the type from dcterms:type or the nearest typed broader concept, else hard', async () => {
    const { taxonomy } = await loadTaxonomyFile(fixture)
    expect(taxonomy.byId.get('soft-skills')!.type).toBe('soft')
    expect(taxonomy.byId.get('negotiation')!.type).toBe('soft')
    expect(taxonomy.byId.get('pytorch')!.type).toBe('hard')
  })

  it('maps text with an imported taxonomy, rolling PyTorch up to deep and machine learning', async () => {
    const { taxonomy } = await loadTaxonomyFile(fixture)
    const m = Matcher.build(taxonomy)
    const r = m.mapText('We train models in PyTorch; negotiating budgets is part of the job.')
    expect(r.mentions.map((x) => x.conceptId).sort()).toEqual(['negotiation', 'pytorch'])
    expect(r.rollups.map((x) => x.conceptId).sort()).toEqual(['deep-learning', 'machine-learning', 'soft-skills'])
    expect(r.rollups.every((x) => x.rollup)).toBe(true)
  })

  // SKOS Reference integrity condition S14 (one prefLabel per language tag); numbering from memory.
  it('reports a second prefLabel in the same language with its line', async () => {
    const text = `${HEAD}ex:a a skos:Concept ;\n  skos:prefLabel "alpha"@en ;\n  skos:prefLabel "alfa"@en .\n`
    const { records, problems } = await parseSkosTurtle(text, 'two.ttl')
    expect(records[0]!.prefLabel).toBe('alpha')
    expect(records[0]!.altLabels).toEqual(['alfa'])
    expect(problems).toEqual([expect.objectContaining({ file: 'two.ttl', line: 3, field: 'skos:prefLabel', severity: 'warning' })])
  })

  it('reports an unknown broader concept and a cycle with file and line', async () => {
    const text = `${HEAD}ex:a a skos:Concept ; skos:prefLabel "a" ; skos:broader ex:b .\nex:b a skos:Concept ; skos:prefLabel "b" ; skos:broader ex:a .\nex:c a skos:Concept ; skos:prefLabel "c" ; skos:broader ex:nowhere .\n`
    const { taxonomy, problems } = await loadTaxonomyText(text, 'cyc.ttl', 'ttl')
    const messages = problems.map((p) => `${p.file}:${p.line}:${p.message}`)
    expect(messages.some((m) => m.startsWith('cyc.ttl:5:') && m.includes('x#nowhere'))).toBe(true)
    expect(messages.some((m) => m.includes('cycle') && m.includes('a -> b -> a'))).toBe(true)
    // the cycle is broken by dropping one link; both concepts remain
    expect(taxonomy.concepts.map((c) => c.id).sort()).toEqual(['a', 'b', 'c'])
    expect(taxonomy.byId.get('a')!.broader.length + taxonomy.byId.get('b')!.broader.length).toBe(1)
  })

  it('keeps the triples before a syntax error and reports the error line', async () => {
    const text = `${HEAD}ex:a a skos:Concept ; skos:prefLabel "a" .\nex:b a skos:Concept ; skos:prefLabel "b" ;\n  skos:broader ex:a ,, .\n`
    const { records, problems } = await parseSkosTurtle(text, 'bad.ttl')
    expect(records.map((r) => r.id)).toContain('a')
    expect(problems.some((p) => p.severity === 'error' && p.line === 5 && /syntax/i.test(p.message))).toBe(true)
  })

  it('skips a concept without prefLabel and rejects non-literal labels', async () => {
    const text = `${HEAD}ex:a a skos:Concept .\nex:b a skos:Concept ; skos:prefLabel ex:notALiteral ; skos:altLabel "bee" .\n`
    const { records, problems } = await parseSkosTurtle(text, 'x.ttl')
    expect(records).toEqual([])
    expect(problems.map((p) => p.severity)).toEqual(expect.arrayContaining(['error']))
    expect(problems.some((p) => p.line === 4 && p.field === 'skos:prefLabel' && /not a literal/.test(p.message))).toBe(true)
  })

  it('uses the full IRI when two concepts share a local name', async () => {
    const text = '@prefix skos: <http://www.w3.org/2004/02/skos/core#> .\n<http://a.example/x/go> a skos:Concept ; skos:prefLabel "Go" .\n<http://b.example/y/go> a skos:Concept ; skos:prefLabel "Go board game" .\n'
    const { records } = await parseSkosTurtle(text, 'dup.ttl')
    expect(records.map((r) => r.id).sort()).toEqual(['http://a.example/x/go', 'http://b.example/y/go'])
  })

  it('fixture file exists and is plain Turtle', async () => {
    expect(fs.readFileSync(fixture, 'utf8')).toContain('skos:hiddenLabel "aminals"@en')
  })
})
