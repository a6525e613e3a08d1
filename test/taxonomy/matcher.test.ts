import { describe, it, expect } from 'vitest'
import { loadCsvTaxonomy, Matcher, shippedMatcher } from '../../src/taxonomy/index.ts'
import { parseRules } from '../../src/taxonomy/rules.ts'

const { matcher } = shippedMatcher()
const ids = (text: string) => matcher.mapText(text).mentions.map((m) => m.conceptId)

describe('ambiguous labels in the shipped taxonomy', () => {
  const cases: [string, string, boolean][] = [
    // Go
    ['go', 'We build backend services in Go and gRPC.', true],
    ['go', 'Skills: Go, Rust, Python', true],
    ['go', 'Three years of Golang experience.', true],
    ['go', 'Go beyond the job description.', false],
    ['go', 'You will go to client sites and help the go-live.', false],
    ['go', 'We go live in March. Go team!', false],
    // R
    ['r', 'Statistical modelling in R or Python.', true],
    ['r', 'Proficiency in R (tidyverse, ggplot2).', true],
    ['r', 'Contact R. Okafor in the Fernhollow finance office.', false],
    ['r', 'Plan R is our fallback for the warehouse move.', false],
    // Excel
    ['microsoft-excel', 'Advanced Excel, including pivot tables.', true],
    ['microsoft-excel', 'You will report in Excel every week.', true],
    ['microsoft-excel', 'You will excel at building relationships.', false],
    ['microsoft-excel', 'Excel in a fast-moving team.', false],
    ['microsoft-excel', 'Excel at customer care and stay calm.', false],
    // Spark
    ['apache-spark', 'Batch jobs on Apache Spark.', true],
    ['apache-spark', 'Experience with Spark and Kafka for streaming data.', true],
    ['apache-spark', 'Ideas that spark change across the cooperative.', false],
    ['apache-spark', 'Spark curiosity in every learner.', false],
    // C and Swift and Rust and Flash
    ['c', 'Embedded firmware in C and C++.', true],
    ['c', 'Present to C-suite stakeholders.', false],
    ['swift', 'iOS apps in Swift and SwiftUI.', true],
    ['swift', 'We expect a swift response to incidents.', false],
    ['rust', 'Systems programming in Rust.', true],
    ['rust', 'Inspect gates for rust and damage.', false],
    ['adobe-flash', 'Maintain legacy Flash animations and ActionScript.', true],
    ['adobe-flash', 'Plan the Flash sale banners.', false],
  ]
  it.each(cases)('%s in "%s" -> %s', (id, text, expected) => {
    expect(ids(text).includes(id)).toBe(expected)
  })
})

describe('matching', () => {
  it('prefers the longest label: "Apache Spark" not "Spark", "React Native" not "React"', () => {
    expect(ids('Apache Spark and React Native')).toEqual(['apache-spark', 'react-native'])
  })

  it('counts a concept once per document with its repetitions and spans', () => {
    const r = matcher.mapText('Python, more Python, and python scripts.')
    expect(r.mentions).toHaveLength(1)
    const m = r.mentions[0]!
    expect(m).toMatchObject({ conceptId: 'python', count: 3, firstOffset: 0, rollup: false })
    expect(m.spans.map((s) => [s.start, s.end, s.text])).toEqual([[0, 6, 'Python'], [13, 19, 'Python'], [25, 31, 'python']])
  })

  it('rolls up broader concepts and marks them as rollups', () => {
    const r = matcher.mapText('Training models in PyTorch.')
    expect(r.mentions.map((m) => m.conceptId)).toEqual(['pytorch'])
    const rollups = r.rollups.map((x) => x.conceptId)
    expect(rollups).toEqual(expect.arrayContaining(['deep-learning', 'machine-learning']))
    expect(r.rollups.find((x) => x.conceptId === 'deep-learning')).toMatchObject({ rollup: true, via: ['pytorch'] })
  })

  it('does not roll up a concept that is also mentioned directly', () => {
    const r = matcher.mapText('PyTorch and machine learning')
    expect(r.mentions.map((m) => m.conceptId).sort()).toEqual(['machine-learning', 'pytorch'])
    expect(r.rollups.map((x) => x.conceptId)).not.toContain('machine-learning')
  })

  it('matches inflected soft-skill phrases through Porter stems, but not excluded look-alikes', () => {
    expect(ids('You enjoy negotiating with suppliers.')).toContain('negotiation')
    expect(ids('Salary negotiable.')).not.toContain('negotiation')
    expect(ids('Communicating clearly matters.')).toContain('communication')
    expect(ids('Join our community of practice.')).not.toContain('communication')
    expect(ids('Critical thinkers welcome.')).toContain('critical-thinking')
    const span = matcher.mapText('negotiated budgets').mentions[0]!.spans[0]!
    expect(span.via).toBe('stem')
  })

  it('does not match across a comma or sentence end unless the label has one', () => {
    expect(ids('C#, .NET')).toEqual(['c-sharp', 'dot-net'])
    expect(ids('machine. Learning to drive')).not.toContain('machine-learning')
    expect(ids('governance, risk and compliance')).toEqual(['governance-risk-and-compliance'])
  })

  it('maps a schema.org skills field: strings, DefinedTerms and term codes', () => {
    const r = matcher.map({ text: 'A role at Fernhollow.', skills: ['go', { '@type': 'DefinedTerm', name: 'Kubernetes' }, { '@type': 'DefinedTerm', termCode: 'terraform' }, 'R; Excel'] })
    const got = r.mentions.map((m) => m.conceptId).sort()
    expect(got).toEqual(['go', 'kubernetes', 'microsoft-excel', 'r', 'terraform'])
    expect(r.mentions.find((m) => m.conceptId === 'kubernetes')!.spans[0]!.field).toBe('skills')
  })

  it('explains rejected candidates', () => {
    const r = matcher.mapText('Excel at staying calm.', { explain: true })
    expect(r.mentions).toEqual([])
    expect(r.rejected).toEqual([expect.objectContaining({ conceptId: 'microsoft-excel', reason: 'not-next', text: 'Excel' })])
  })

  it('reports offsets into the NFKC form of non-ASCII text', () => {
    const text = 'Ｐｙｔｈｏｎ und Kubernetes für die Genossenschaft'
    const r = matcher.mapText(text)
    const norm = text.normalize('NFKC')
    for (const m of r.mentions) for (const s of m.spans) expect(norm.slice(s.start, s.end)).toBe(s.text)
    expect(r.mentions.map((m) => m.conceptId)).toEqual(['python', 'kubernetes'])
  })
})

describe('imported taxonomies without rules get safe inferred defaults', () => {
  const csv = [
    'id,prefLabel,altLabel,hiddenLabel,broader,type',
    'golang,Go,,,,hard',
    'excel,Excel,,,,hard',
    'kubernetes,Kubernetes,,,,hard',
    'teamwork,teamwork,,,,soft',
  ].join('\n')
  const m = Matcher.build(loadCsvTaxonomy(csv, 'mini.csv').taxonomy)
  const got = (t: string) => m.mapText(t).mentions.map((x) => x.conceptId)

  it('needs evidence for a two-letter label', () => {
    expect(got('Go to the meeting.')).toEqual([])
    expect(got('Go and Kubernetes')).toEqual(['golang', 'kubernetes'])
    expect(got('Backend developer, Go.')).toEqual(['golang'])
  })

  it('needs the case as written for a common-word label, and evidence at a sentence start', () => {
    expect(got('Reports in Excel.')).toEqual(['excel'])
    expect(got('They excel under pressure.')).toEqual([])
    expect(got('Excel under pressure.')).toEqual([])
  })

  it('lets a rule file override the inference', () => {
    const rules = parseRules('[golang]\ncase = any\nevidence = none\n', 'mini.rules')
    const m2 = Matcher.build(loadCsvTaxonomy(csv, 'mini.csv').taxonomy, rules)
    expect(m2.mapText('go to the meeting').mentions.map((x) => x.conceptId)).toEqual(['golang'])
  })
})
