/**
 * The compiled matcher kept in the database (src/taxonomy/matcher-cache.ts): a restored matcher maps
 * exactly as a compiled one; the stored bytes are used only for their taxonomy version and build of
 * the code; a taxonomy import, bad bytes and a read-only connection are handled.
 */
import { describe, expect, it } from 'vitest'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import v8 from 'node:v8'
import { generateTaxonomy } from '../../bench/corpus.ts'
import { loadConfig } from '../../src/config.ts'
import { openDb, type Db } from '../../src/db/connection.ts'
import { readMatcherCache, taxonomyVersion, writeMatcherCache } from '../../src/db/taxonomy.ts'
import { loadCsvTaxonomy, shippedMatcher } from '../../src/taxonomy/index.ts'
import { Matcher } from '../../src/taxonomy/matcher.ts'
import { matcherCodeKey, packMatcher, unpackMatcher } from '../../src/taxonomy/matcher-cache.ts'
import { mapperSource, matcherFromSource } from '../../src/taxonomy/parallel.ts'
import { ensureTaxonomy, importTaxonomy, matcherFromDb, packedMatcherFromDb, storedTaxonomy } from '../../src/taxonomy/store.ts'

const config = loadConfig({ db: ':memory:' })
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-matcher-cache-'))

/** Texts that exercise case rules, evidence rules, inflections, lists, non-ASCII and the skills field. */
const TEXTS = [
  { text: 'Kubernetes and Terraform on Fernhollow infrastructure. PyTorch a plus.' },
  { text: 'Advanced Excel, SQL; negotiating with suppliers. Excel at teamwork.', skills: ['R', { '@type': 'DefinedTerm', name: 'Tableau' }] },
  { text: 'We use Go, Rust and Swift; the swift river; GO TEAM. Négociation, Python 3, C++ and C#.' },
  { text: 'Leading teams, coached analysts, stakeholder management and data visualisation with Power BI.' },
  { text: '' },
]

const mapAll = (m: Matcher) => TEXTS.map((input) => m.map(input, { explain: true }))

function memoryDbWithTaxonomy(): Promise<Db> {
  const db = openDb(':memory:')
  return ensureTaxonomy(db, config).then(() => db)
}

describe('packMatcher / unpackMatcher', () => {
  it('a restored matcher maps like the compiled one (shipped taxonomy and rules: spans, roll-ups, rejections)', () => {
    const compiled = shippedMatcher().matcher
    const restored = unpackMatcher(packMatcher(compiled))
    expect(mapAll(restored)).toEqual(mapAll(compiled))
    expect(mapAll(restored).some((m) => m.mentions.length > 0 && (m.rejected?.length ?? 0) > 0)).toBe(true)
    expect(restored.labelCount).toBe(compiled.labelCount)
    expect(restored.problems).toEqual(compiled.problems)
  })

  it('a restored matcher maps like the compiled one on a generated 2,000-concept taxonomy (generated label texts)', () => {
    const generated = generateTaxonomy({ concepts: 2_000, labels: 8_000, seed: 11 })
    const compiled = Matcher.build({ concepts: generated.concepts, byId: new Map(generated.concepts.map((c) => [c.id, c])) })
    const restored = unpackMatcher(packMatcher(compiled))
    const texts = generated.concepts.slice(0, 300).map((c, i) => ({ text: `Role ${i}: ${c.prefLabel}, ${c.altLabels.join(' and ')}; also ${generated.concepts[(i * 7) % generated.concepts.length]!.prefLabel.toUpperCase()}.` }))
    const a = texts.map((t) => compiled.map(t, { explain: true }))
    const b = texts.map((t) => restored.map(t, { explain: true }))
    expect(b).toEqual(a)
    expect(a.reduce((n, m) => n + m.mentions.length, 0)).toBeGreaterThan(300)
  })

  it('refuses bytes that are not a packed matcher', () => {
    expect(() => unpackMatcher(Buffer.from('not a matcher'))).toThrow()
    expect(() => unpackMatcher(new Uint8Array(v8.serialize({ concepts: [], data: {} })))).toThrow(/not a packed matcher/)
  })
})

describe('matcherFromDb with the stored compiled matcher', () => {
  it('stores the compiled matcher on first use, and a new connection restores it instead of compiling', async () => {
    const file = path.join(tmp, `first-${process.pid}.db`)
    const db = openDb(file)
    await ensureTaxonomy(db, config)
    const version = taxonomyVersion(db)
    const code = matcherCodeKey()!
    expect(code).toMatch(/^[0-9a-f]{32}$/)
    expect(readMatcherCache(db, version, code)).toBeUndefined()
    const compiled = matcherFromDb(db)
    expect(readMatcherCache(db, version, code)!.length).toBeGreaterThan(10_000)
    db.close()
    // proof that the stored bytes are what a new connection uses: store a matcher of another
    // taxonomy under the current key; the new connection maps with that one
    const other = Matcher.build(loadCsvTaxonomy('id,prefLabel\nzz-widget,Widgetry\n', 'other.csv').taxonomy)
    const db2 = openDb(file)
    writeMatcherCache(db2, version, code, packMatcher(other))
    expect(matcherFromDb(db2).map({ text: 'Widgetry and Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual(['zz-widget'])
    db2.close()
    const db3 = openDb(file)
    writeMatcherCache(db3, version, code, packMatcher(compiled))
    expect(mapAll(matcherFromDb(db3))).toEqual(mapAll(compiled))
    db3.close()
  })

  it('ignores bytes stored by another build of the code or for another taxonomy version', async () => {
    const db = await memoryDbWithTaxonomy()
    const version = taxonomyVersion(db)
    const other = Matcher.build(loadCsvTaxonomy('id,prefLabel\nzz-widget,Widgetry\n', 'other.csv').taxonomy)
    writeMatcherCache(db, version, 'another-build', packMatcher(other))
    expect(matcherFromDb(db).map({ text: 'Widgetry and Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual(['kubernetes'])
    const db2 = await memoryDbWithTaxonomy()
    writeMatcherCache(db2, version + 1, matcherCodeKey()!, packMatcher(other))
    expect(matcherFromDb(db2).map({ text: 'Widgetry and Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual(['kubernetes'])
    // and the bytes of the right key replace the one row kept
    expect(db2.prepare('SELECT taxonomy_version, code FROM matcher_cache').all()).toEqual([{ taxonomy_version: version, code: matcherCodeKey() }])
  })

  it('compiles afresh and stores again when the stored bytes cannot be restored', async () => {
    const db = await memoryDbWithTaxonomy()
    const version = taxonomyVersion(db)
    const code = matcherCodeKey()!
    writeMatcherCache(db, version, code, Buffer.from([0xff, 0x0f, 0x00, 0x01]))
    expect(matcherFromDb(db).map({ text: 'Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual(['kubernetes'])
    expect(readMatcherCache(db, version, code)!.length).toBeGreaterThan(10_000)
  })

  it('a taxonomy import removes the stored matcher, and the next one is of the new taxonomy', async () => {
    const db = await memoryDbWithTaxonomy()
    matcherFromDb(db)
    expect(db.prepare('SELECT COUNT(*) AS n FROM matcher_cache').get()).toEqual({ n: 1 })
    const file = path.join(tmp, 'replacement.csv')
    fs.writeFileSync(file, 'id,prefLabel,altLabel\nquill,Quill pens,quills\n')
    const result = await importTaxonomy(db, file, { skipBad: false })
    expect(result.refused).toBe(false)
    expect(db.prepare('SELECT COUNT(*) AS n FROM matcher_cache').get()).toEqual({ n: 0 })
    expect(matcherFromDb(db).map({ text: 'Quills and Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual(['quill'])
    expect(readMatcherCache(db, taxonomyVersion(db), matcherCodeKey()!)).toBeDefined()
  })

  it('a read-only connection maps without storing anything', async () => {
    const file = path.join(tmp, `readonly-${process.pid}.db`)
    const db = openDb(file)
    await ensureTaxonomy(db, config)
    db.close()
    const ro = openDb(file, { readonly: true })
    expect(matcherFromDb(ro).map({ text: 'Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual(['kubernetes'])
    expect(ro.prepare('SELECT COUNT(*) AS n FROM matcher_cache').get()).toEqual({ n: 0 })
    ro.close()
  })

  it('worker threads restore the stored bytes; bytes of another concept list are not used', async () => {
    const db = await memoryDbWithTaxonomy()
    const packed = packedMatcherFromDb(db).bytes!
    const taxonomy = storedTaxonomy(db)
    const fromBytes = matcherFromSource(mapperSource(taxonomy, null, '(none)', undefined, packed))
    expect(mapAll(fromBytes)).toEqual(mapAll(matcherFromDb(db)))
    // a source whose concepts differ from the bytes' (another version read in between) compiles its own
    const fewer = { concepts: taxonomy.concepts.filter((c) => c.id !== 'kubernetes'), byId: new Map() }
    const compiled = matcherFromSource(mapperSource(fewer, null, '(none)', undefined, packed))
    expect(compiled.taxonomy.concepts.length).toBe(taxonomy.concepts.length - 1)
    expect(compiled.map({ text: 'Kubernetes' }).mentions.map((m) => m.conceptId)).toEqual([])
  })

  it('gives the bytes of a matcher this connection already holds, storing them when the table has none', async () => {
    const db = await memoryDbWithTaxonomy()
    const held = matcherFromDb(db)
    db.prepare('DELETE FROM matcher_cache').run()
    const { matcher, bytes } = packedMatcherFromDb(db)
    expect(matcher).toBe(held)
    expect(bytes).toBeDefined()
    expect(readMatcherCache(db, taxonomyVersion(db), matcherCodeKey()!)).toEqual(Buffer.from(bytes!))
    expect(mapAll(unpackMatcher(bytes!))).toEqual(mapAll(held))
  })
})
