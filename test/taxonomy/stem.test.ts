import { describe, it, expect } from 'vitest'
import { spawnSync } from 'node:child_process'
import { porterStem } from '../../src/taxonomy/stem.ts'
import { DEFAULT_STEM_EXCLUDE } from '../../src/taxonomy/policy.ts'

describe('Porter stemmer', () => {
  // Pairs from Martin Porter's reference vocabulary (voc.txt -> output.txt), as copied in the
  // words/stemmer repository's test fixture (CHECKS.md section 8 [S]). The output file follows
  // Porter's reference code, with its "bli -> ble" and "logi -> log" departures from the 1980 paper.
  const reference: [string, string][] = [
    ['a', 'a'], ['abandoned', 'abandon'], ['abase', 'abas'], ['abatements', 'abat'], ['abbey', 'abbei'],
    ['abbominable', 'abbomin'], ['abed', 'ab'], ['abergavenny', 'abergavenni'], ['abetting', 'abet'],
    ['abhorred', 'abhor'], ['agreed', 'agre'], ['troubled', 'troubl'], ['rational', 'ration'], ['happy', 'happi'],
    ['sky', 'sky'], ['ties', 'ti'], ['cats', 'cat'], ['hopeful', 'hope'], ['goodness', 'good'], ['adoption', 'adopt'],
    ['controlling', 'control'], ['rolling', 'roll'], ['cease', 'ceas'], ['considerations', 'consider'],
    ['detestable', 'detest'], ['vileness', 'vile'], ['possibly', 'possibl'], ['apology', 'apolog'],
  ]
  it.each(reference)('%s -> %s (Porter reference vocabulary)', (word, stem) => {
    expect(porterStem(word)).toBe(stem)
  })

  // Families the matcher relies on: each inflection must reach its label's stem. Regression
  // values computed with natural's stemmer; the families are common practice, no source.
  const families: [string, string[]][] = [
    ['negotiation', ['negotiating', 'negotiate', 'negotiated', 'negotiations']],
    ['communication', ['communicating', 'communicate', 'communicated', 'communications']],
    ['collaboration', ['collaborating', 'collaborate', 'collaborated']],
    ['leadership', ['leaderships']],
    ['mentoring', ['mentor', 'mentors', 'mentored']],
    ['prioritisation', ['prioritise', 'prioritised', 'prioritising']],
    ['facilitation', ['facilitate', 'facilitating', 'facilitator']],
    ['management', ['managing', 'managers', 'manager', 'manage']],
    ['testing', ['tests', 'tested', 'test']],
    ['databases', ['database']],
  ]
  it.each(families)('inflections of %s share its stem', (label, forms) => {
    for (const f of forms) expect(porterStem(f), f).toBe(porterStem(label))
  })

  it('excluded words really collide with a label stem (otherwise the exclusion is dead weight)', () => {
    const labelStems = new Set(['communication', 'negotiation', 'integrity', 'adaptability', 'creativity', 'delegation', 'influencing', 'assertiveness', 'accountability', 'professionalism', 'resourcefulness', 'dependability', 'decisive', 'coaching'].map(porterStem))
    for (const w of DEFAULT_STEM_EXCLUDE) expect(labelStems.has(porterStem(w)), w).toBe(true)
  })

  it('leaves non-letter tokens alone and memoises', () => {
    expect(porterStem('c++')).toBe('c++')
    expect(porterStem('negotiating')).toBe(porterStem('negotiating'))
  })

  it('prints nothing on stdout when the taxonomy modules load (natural pulls dotenv otherwise)', () => {
    const code = "const t = await import('./src/taxonomy/index.ts'); t.shippedMatcher().matcher.mapText('negotiating in Excel'); process.stdout.write('{\"ok\":true}')"
    const r = spawnSync(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', code], { cwd: process.cwd(), encoding: 'utf8' })
    expect(r.stderr).toBe('')
    expect(r.stdout).toBe('{"ok":true}')
  })
})
