import { describe, it, expect } from 'vitest'
import { loadCsvTaxonomy } from '../../src/taxonomy/index.ts'
import { parseTaxonomyCsv } from '../../src/taxonomy/csv-loader.ts'

const HEADER = 'id,prefLabel,altLabel,hiddenLabel,broader,type\n'

describe('taxonomy CSV', () => {
  it('reads labels and broader links split on |', () => {
    const { records, problems } = parseTaxonomyCsv(`${HEADER}go,Go,Golang|Go language,Goalng,programming,hard\nprogramming,programming,coding,,,hard\n`, 't.csv')
    expect(problems).toEqual([])
    expect(records[0]).toMatchObject({ id: 'go', prefLabel: 'Go', altLabels: ['Golang', 'Go language'], hiddenLabels: ['Goalng'], broader: ['programming'], type: 'hard', source: { file: 't.csv', line: 2 } })
  })

  it('keeps good rows and reports each bad one with its line and field', () => {
    const text = `${HEADER}a,A,,,,hard\n,B,,,,hard\nc,,,,,hard\nd,D,,,,medium\na,A again,,,,hard\ne,E,,,,\nf f,F,,,,soft\ng,G,,,,soft\n`
    const { records, problems } = parseTaxonomyCsv(text, 'bad.csv')
    expect(records.map((r) => r.id)).toEqual(['a', 'e', 'g'])
    const at = problems.map((p) => [p.line, p.field, p.severity])
    expect(at).toEqual([
      [3, 'id', 'error'],
      [4, 'prefLabel', 'error'],
      [5, 'type', 'error'],
      [6, 'id', 'error'],
      [7, 'type', 'warning'],
      [8, 'id', 'error'],
    ])
    expect(problems.every((p) => p.file === 'bad.csv')).toBe(true)
  })

  it('gives the starting line of a quoted multi-line row and reports rows with the wrong number of fields', () => {
    const text = `${HEADER}a,"A, with comma","alt one|alt ""two""",,,hard\nb,"B\nspanning",,,,hard\nc,C,,,hard\nd,D,,,,soft\n`
    const { records, problems } = parseTaxonomyCsv(text, 'q.csv')
    expect(records.map((r) => [r.id, r.source.line])).toEqual([['a', 2], ['b', 3], ['d', 6]])
    expect(records[0]!.altLabels).toEqual(['alt one', 'alt "two"'])
    expect(problems).toEqual([expect.objectContaining({ line: 5, severity: 'error' })])
  })

  it('refuses a file without the required columns and names them', () => {
    const { records, problems } = parseTaxonomyCsv('name,label\nx,y\n', 'h.csv')
    expect(records).toEqual([])
    expect(problems.map((p) => [p.line, p.field])).toEqual([[1, 'id'], [1, 'prefLabel']])
  })

  it('validates across rows: unknown broader, self link, cycles, duplicate labels', () => {
    const text = [
      HEADER.trim(),
      'ml,machine learning,ML,,data-science,hard',
      'dl,deep learning,,,ml,hard',
      'data-science,data science,,,dl,hard', // closes dl -> ml -> data-science -> dl
      'x,X,,,nowhere|x,hard',
      'ml2,Machine-Learning,,,,hard', // same label as ml once folded and tokenised
      'y,Y,ml,,,hard', // "ml" altLabel collides with ML
    ].join('\n')
    const { taxonomy, problems } = loadCsvTaxonomy(text, 'v.csv')
    const msgs = problems.map((p) => `${p.line}:${p.field}:${p.message}`)
    expect(msgs.some((m) => m.startsWith('5:broader:') && m.includes('"nowhere"'))).toBe(true)
    expect(msgs.some((m) => m.startsWith('5:broader:') && m.includes('its own broader'))).toBe(true)
    expect(msgs.filter((m) => m.includes('cycle'))).toHaveLength(1)
    expect(msgs.some((m) => m.startsWith('6:prefLabel:') && m.includes('"ml"'))).toBe(true)
    expect(msgs.some((m) => m.startsWith('7:altLabel:') && m.includes('"ml"'))).toBe(true)
    // every concept is kept; the dropped links and labels are gone
    expect(taxonomy.concepts).toHaveLength(6)
    expect(taxonomy.byId.get('x')!.broader).toEqual([])
    expect(taxonomy.byId.get('y')!.altLabels).toEqual([])
    expect(taxonomy.byId.get('ml2')!.unmatchedPrefLabel).toBe(true)
    const links = ['ml', 'dl', 'data-science'].map((id) => taxonomy.byId.get(id)!.broader.length)
    expect(links.reduce((a, b) => a + b, 0)).toBe(2)
  })
})
