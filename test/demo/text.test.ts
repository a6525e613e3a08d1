/**
 * The demo's vocabulary against the shipped taxonomy (taxonomy/skills.csv, the outside reference
 * here): every phrase is a label of its concept, the fixed wording never names a planted skill, the
 * invented terms are unknown to the taxonomy, and generated text mentions exactly the skills the
 * generator records as its ground truth.
 */
import { describe, expect, it } from 'vitest'
import { demoMonths } from '../../src/demo/calendar.ts'
import { COURSE_TITLES, generateCourses } from '../../src/demo/courses.ts'
import { PLACES, ROLES, employerNames, FAMILY_NAMES, GIVEN_NAMES } from '../../src/demo/org.ts'
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'
import { generatePostings } from '../../src/demo/postings.ts'
import { REQUEST_FORMS, REQUEST_GENERIC, SEARCH_FORMS, SEARCH_GENERIC, TICKET_FORMS, TICKET_GENERIC, generateRequests } from '../../src/demo/requests.ts'
import { INVENTED_TERMS, demoSkills } from '../../src/demo/skills.ts'
import { CLOSINGS, INTROS, MUST, NICE, SOFT, renderHtml, renderPlain, salaryText } from '../../src/demo/text.ts'
import { ASSESSED_SKILLS, IMPORTED_SKILLS } from '../../src/demo/workforce.ts'
import { allLabels, ancestors, conceptScanner, loadTaxonomy } from './taxonomy-helper.ts'

const tax = loadTaxonomy()
const skills = demoSkills()
const plantedIds = PLANTED_SKILLS.map((p) => p.id)
const scanPlanted = conceptScanner(tax, plantedIds)

describe('demo vocabulary against taxonomy/skills.csv', () => {
  it('has a scanner that finds labels as whole words only', () => {
    expect(scanPlanted('We need project delivery and data protection skills').sort()).toEqual(['data-privacy', 'project-management'])
    expect(scanPlanted('JavaScript and PostgreSQL')).toEqual([])
    expect(scanPlanted('Go and K8s')).toEqual(['kubernetes', 'go'])
    expect(scanPlanted('let us go')).toEqual([])
  })

  it('uses only concept ids present in the taxonomy', () => {
    for (const s of skills) if (s.kind !== 'invented') expect(tax.has(s.id), s.id).toBe(true)
    for (const id of [...ASSESSED_SKILLS, ...IMPORTED_SKILLS]) expect(tax.has(id), id).toBe(true)
    for (const r of ROLES) for (const [id] of r.requires) expect(tax.has(id), `${r.name} requires ${id}`).toBe(true)
    for (const r of ROLES) expect(r.requires.length, r.name).toBeGreaterThanOrEqual(4)
  })

  it('writes each skill only with labels of its own concept', () => {
    for (const s of skills) {
      if (s.kind === 'invented') continue
      const labels = allLabels(tax.get(s.id)!)
      for (const p of [...s.phrases, s.solo]) expect(labels, `${s.id}: "${p}"`).toContain(p)
    }
    // planted.ts promises its phrase is a prefLabel or altLabel
    for (const p of PLANTED_SKILLS) expect(allLabels(tax.get(p.id)!)).toContain(p.phrase)
  })

  it('declares every roll-up into a planted skill, and roll-ups only reach steady planted skills', () => {
    const steady = new Set(PLANTED_SKILLS.filter((p) => p.shape.kind === 'steady').map((p) => p.id))
    for (const s of skills) {
      if (s.kind === 'invented') continue
      const planted = [...ancestors(tax, s.id)].filter((a) => plantedIds.includes(a)).sort()
      expect([...s.rollsUpTo].sort(), s.id).toEqual(planted)
      for (const id of planted) expect(steady.has(id), `${s.id} rolls up into ${id}`).toBe(true)
    }
  })

  it('invents terms the taxonomy does not contain in any label', () => {
    for (const t of INVENTED_TERMS) {
      for (const row of tax.values()) for (const l of allLabels(row)) expect(l.toLowerCase().includes(t.phrases[0]!.toLowerCase()), `${row.id}: ${l}`).toBe(false)
    }
  })

  it('never names a planted skill in fixed wording', () => {
    const fixed = [
      ...INTROS, ...MUST, ...NICE, ...SOFT, ...CLOSINGS, ...SEARCH_FORMS, ...SEARCH_GENERIC, ...REQUEST_FORMS, ...REQUEST_GENERIC,
      ...TICKET_FORMS, ...TICKET_GENERIC, ...COURSE_TITLES, ...PLACES, ...employerNames(), ...GIVEN_NAMES, ...FAMILY_NAMES,
      salaryText(48000, 56000), 'Fernhollow Cooperative',
      ...ROLES.flatMap((r) => [...r.duties, ...r.teams]),
    ].map((t) => t.replace(/\{\w\}/g, ' '))
    for (const text of fixed) expect(scanPlanted(text), text).toEqual([])
    // a role title may name a planted skill only when the role declares it as implied
    for (const r of ROLES) for (const t of [r.name, ...r.titles]) expect(scanPlanted(t).sort(), t).toEqual([...r.implied].sort())
  })
})

describe('generated text mentions exactly the recorded skills', () => {
  const months = demoMonths('2025-06-15', 36)

  it('postings: planted skills found in title and body equal the planted skills recorded', () => {
    let checked = 0
    generatePostings({ seed: 11, months, perMonth: 80 }, (p) => {
      const recorded = p.skillIds.filter((id) => plantedIds.includes(id)).sort()
      const text = `${p.title}\n${renderPlain(p.parts)}`
      expect(scanPlanted(text).sort(), text).toEqual(recorded)
      // the HTML rendering says the same (entities aside)
      const html = renderHtml(p.parts).replace(/<[^>]+>/g, ' ').replace(/&amp;/g, '&').replace(/&#39;/g, "'")
      expect(scanPlanted(`${p.title}\n${html}`).sort()).toEqual(recorded)
      for (const t of INVENTED_TERMS) expect(text.includes(t.phrases[0]!), t.id).toBe(p.skillIds.includes(t.id))
      checked++
    })
    expect(checked).toBeGreaterThan(2500)
  })

  it('reposts: exact ones have the same words in every format, edited ones a 4-shingle Jaccard of at least 0.9', () => {
    // words only, lower-cased; HTML tags and entities dropped (how a dedupe step would normalise the text)
    const words = (text: string) => text.replace(/<[^>]+>/g, ' ').replace(/&[a-z#0-9]+;/g, ' ').toLowerCase().match(/[a-z0-9]+/g) ?? []
    const shingles = (ws: string[]) => new Set(ws.map((_w, i) => ws.slice(i, i + 4).join(' ')).slice(0, Math.max(1, ws.length - 3)))
    const byId = new Map<string, { title: string; plain: string; html: string }>()
    let exact = 0
    let edited = 0
    generatePostings({ seed: 12, months, perMonth: 120 }, (p) => {
      const doc = { title: p.title, plain: renderPlain(p.parts), html: renderHtml(p.parts) }
      if (p.repostOf === null) {
        byId.set(p.identifier, doc)
        return
      }
      const orig = byId.get(p.repostOf)!
      const a = words(`${orig.title} ${orig.plain}`)
      if (!p.edited) {
        exact++
        expect(words(`${p.title} ${doc.html}`)).toEqual(a)
        expect(words(`${p.title} ${doc.plain}`)).toEqual(a)
      } else {
        edited++
        const sa = shingles(a)
        const sb = shingles(words(`${p.title} ${doc.html}`))
        const inter = [...sa].filter((x) => sb.has(x)).length
        expect(inter / (sa.size + sb.size - inter), p.identifier).toBeGreaterThanOrEqual(0.9)
        expect(sb).not.toEqual(sa)
      }
    })
    expect(exact).toBeGreaterThan(100)
    expect(edited).toBeGreaterThan(30)
  })

  it('requests: planted skills found in the text match the truth counts', () => {
    const { rows, truth } = generateRequests(11, months, 120)
    const counts: Record<string, number> = {}
    for (const r of rows) for (const id of scanPlanted(r.text)) counts[id] = (counts[id] ?? 0) + 1
    for (const id of plantedIds) expect(counts[id] ?? 0, id).toBe(truth.mentions[id]!.reduce((a, b) => a + b, 0))
  })

  it('courses: untagged courses name their skill in the title', () => {
    const courses = generateCourses(11, 36, '2025-06-15')
    expect(courses.length).toBe(150)
    const untagged = courses.filter((c) => c.skills === '')
    expect(untagged.length).toBeGreaterThan(10)
    const byLabel = new Map<string, string>()
    for (const row of tax.values()) for (const l of allLabels(row)) byLabel.set(l.toLowerCase(), row.id)
    for (const c of untagged) {
      const found = [...tax.values()].some((row) => allLabels(row).some((l) => l.length >= 2 && c.title.toLowerCase().includes(l.toLowerCase())))
      expect(found, c.title).toBe(true)
    }
    // tagged courses use ids or labels the taxonomy knows
    for (const c of courses.filter((x) => x.skills !== '')) {
      for (const tag of c.skills.split('|')) expect(tax.has(tag) || byLabel.has(tag.toLowerCase()), `${c.course_id}: ${tag}`).toBe(true)
    }
  })
})
