/**
 * Fuzzing the taxonomy import (`tides import taxonomy`, CSV and SKOS Turtle) with fast-check, seeded
 * and bounded. The import rules (src/taxonomy/store.ts, validate.ts): a row that cannot be a concept
 * (no prefLabel, no or bad id, bad type, duplicate id, wrong field count) is an error that refuses the
 * file, or with skip-bad is skipped while the good concepts land; a broken broader link is an error
 * whose link is dropped (the concept stays); every problem names its line.
 */
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import fc from 'fast-check'
import { afterAll, describe, expect, it } from 'vitest'
import { IMPORTERS } from '../../src/commands/registry.ts'
import { loadConfig } from '../../src/config.ts'
import { contentHash, openDb } from '../../src/db/connection.ts'
import { formatProblem } from '../../src/util/csv.ts'

const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'tides-fuzztax-'))
afterAll(() => fs.rmSync(tmp, { recursive: true, force: true }))
const config = loadConfig({ db: ':memory:' })
const HEADER = 'id,prefLabel,altLabel,hiddenLabel,broader,type'

function cell(v: string): string {
  return /[",\r\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v
}

type Row = { line: string; kind: 'good' | 'skipped' | 'link-dropped' }

/** A good concept row; `i` keeps ids and labels unique within a file. */
const goodRow = (i: number, ids: number) =>
  fc
    .record({
      label: fc.constantFrom('Data pipelines', 'Café logistics', 'C++', '.NET', 'Node.js', "=cmd|' /C calc'!A0", 'rust, systems', 'say "hi"', '日本語'),
      alts: fc.array(fc.constantFrom('alt a', 'alt b', 'Alt, c'), { maxLength: 2 }),
      type: fc.constantFrom('hard', 'soft', 'hard'),
      broader: fc.option(fc.nat(Math.max(0, ids - 1)), { nil: undefined }),
    })
    .map(({ label, alts, type, broader }): Row => {
      const b = broader !== undefined && broader !== i ? `c${broader}` : ''
      const altLabels = [...new Set(alts)].map((a) => `${a} ${i}`).join('|')
      return { line: [`c${i}`, `${label} ${i}`, altLabels, '', b, type].map(cell).join(','), kind: 'good' }
    })

/** A row the import must skip (with skip-bad) or refuse the file for. */
const skippedRow = (i: number): fc.Arbitrary<Row> =>
  fc.constantFrom<Row>(
    { line: `x${i},,alt x${i},,,hard`, kind: 'skipped' },
    { line: `x${i},Thing ${i},,,,medium`, kind: 'skipped' },
    { line: `has space ${i},Thing ${i},,,,hard`, kind: 'skipped' },
    { line: `,Thing ${i},,,,hard`, kind: 'skipped' },
    { line: `c0,Duplicate ${i},,,,hard`, kind: 'skipped' },
    { line: `x${i},Thing ${i},,hard`, kind: 'skipped' },
    { line: `x${i},Thing ${i},,,nowhere-${i},hard`, kind: 'link-dropped' },
    { line: `x${i},Thing ${i},,,x${i},hard`, kind: 'link-dropped' },
  )

describe('taxonomy CSV under fuzzing', () => {
  it.skipIf(!IMPORTERS.taxonomy)('planted bad rows are reported by line; skip-bad keeps the good concepts; otherwise nothing is stored', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.integer({ min: 2, max: 12 }).chain((n) =>
          fc.tuple(...Array.from({ length: n }, (_, i) => (i === 0 ? goodRow(0, 1) : fc.oneof({ weight: 3, arbitrary: goodRow(i, i) }, { weight: 1, arbitrary: skippedRow(i) })))),
        ),
        async (drawn) => {
          // a good row's broader link must name a good concept (a skipped row is not one)
          const good = new Set(drawn.flatMap((r, i) => (r.kind === 'good' ? [`c${i}`] : [])))
          const rows = drawn.map((r) => {
            if (r.kind !== 'good') return r
            const fields = r.line.match(/("([^"]|"")*"|[^,]*)(,|$)/g)!.map((f) => f.replace(/,$/, ''))
            if (fields[4] && !good.has(fields[4])) fields[4] = ''
            return { ...r, line: fields.slice(0, 6).join(',') }
          })
          const file = path.join(tmp, 'taxonomy.csv')
          fs.writeFileSync(file, [HEADER, ...rows.map((r) => r.line)].join('\n') + '\n')
          const badLines = rows.map((r, i) => (r.kind === 'good' ? 0 : i + 2)).filter(Boolean)
          const kept = rows.filter((r) => r.kind !== 'skipped').length

          const db = openDb(':memory:')
          const before = contentHash(db)
          const strict = await IMPORTERS.taxonomy!(db, config, file, { skipBad: false, log: () => {} })
          const errorLines = [...new Set(strict.problems.filter((p) => !/warning/.test(p.reason)).map((p) => p.line))].sort((a, b) => a - b)
          expect(errorLines, rows.map((r) => r.line).join(' / ')).toEqual(badLines)
          for (const p of strict.problems) expect(formatProblem(p)).toMatch(/taxonomy\.csv:\d+: /)
          if (badLines.length) {
            expect(strict.refused).toBe(true)
            expect(contentHash(db)).toBe(before)
          } else expect(strict.imported).toBe(kept)
          db.close()

          const db2 = openDb(':memory:')
          const lenient = await IMPORTERS.taxonomy!(db2, config, file, { skipBad: true, log: () => {} })
          expect(lenient.refused).toBe(false)
          expect(lenient.imported).toBe(kept)
          expect((db2.prepare('SELECT COUNT(*) AS n FROM concepts').get() as { n: number }).n).toBe(kept)
          // a dropped link leaves no broader row pointing at the bad target
          expect((db2.prepare("SELECT COUNT(*) AS n FROM concept_broader WHERE broader_id LIKE 'nowhere-%' OR concept_id = broader_id").get() as { n: number }).n).toBe(0)
          db2.close()
        },
      ),
      { seed: 9190, numRuns: 30 },
    )
  })
})

describe('SKOS Turtle under mutation', () => {
  const turtle = `@prefix skos: <http://www.w3.org/2004/02/skos/core#> .
@prefix ex: <https://fernhollow.example/skills/> .

ex:python a skos:Concept ;
  skos:prefLabel "Python"@en ;
  skos:altLabel "py"@en .

ex:sql a skos:Concept ;
  skos:prefLabel "SQL"@en ;
  skos:broader ex:python .

ex:rust a skos:Concept ;
  skos:prefLabel "Rust"@en .
`
  it.skipIf(!IMPORTERS.taxonomy)('truncated, spliced and random Turtle: never a crash; a refusal names a reason', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.oneof(
          fc.nat(turtle.length).map((cut) => turtle.slice(0, cut)),
          fc.tuple(fc.nat(turtle.length), fc.constantFrom('"', '<', '>', ';', '.', '@prefix', '\\u0000', '"""', '^^', '\uFFFD', '#')).map(([at, s]) => turtle.slice(0, at) + s + turtle.slice(at)),
          fc.string({ unit: 'binary', maxLength: 300 }),
        ),
        async (text) => {
          const file = path.join(tmp, 'taxonomy.ttl')
          fs.writeFileSync(file, text)
          const db = openDb(':memory:')
          const r = await IMPORTERS.taxonomy!(db, config, file, { skipBad: true, log: () => {} })
          if (r.refused) expect(r.problems.map((p) => p.reason).join(' ')).toMatch(/\S/)
          else expect((db.prepare('SELECT COUNT(*) AS n FROM concepts').get() as { n: number }).n).toBe(r.imported)
          db.close()
        },
      ),
      { seed: 9191, numRuns: 80 },
    )
  })
})
