import { describe, it, expect } from 'vitest'
import fs from 'node:fs'
import { loadCsvTaxonomy, SHIPPED_TAXONOMY, shippedMatcher } from '../../src/taxonomy/index.ts'
import { isKebabCase, slugify } from '../../src/taxonomy/slug.ts'
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'

const { taxonomy, problems } = loadCsvTaxonomy(fs.readFileSync(SHIPPED_TAXONOMY, 'utf8'), SHIPPED_TAXONOMY)

describe('shipped taxonomy', () => {
  it('loads without problems and has at least 600 concepts of both types', () => {
    expect(problems).toEqual([])
    expect(taxonomy.concepts.length).toBeGreaterThanOrEqual(600)
    const soft = taxonomy.concepts.filter((c) => c.type === 'soft').length
    expect(soft).toBeGreaterThanOrEqual(60)
    expect(taxonomy.concepts.length - soft).toBeGreaterThanOrEqual(500)
  })

  it('uses kebab-case slugs of the prefLabel as ids', () => {
    for (const c of taxonomy.concepts) {
      expect(isKebabCase(c.id), c.id).toBe(true)
      expect(slugify(c.prefLabel), c.prefLabel).toBe(c.id)
    }
    expect(slugify('C#')).toBe('c-sharp')
    expect(slugify('.NET')).toBe('dot-net')
  })

  it('has every planted demo skill, with the planted phrase as prefLabel or altLabel', () => {
    for (const p of PLANTED_SKILLS) {
      const c = taxonomy.byId.get(p.id)
      expect(c, p.id).toBeDefined()
      expect([c!.prefLabel, ...c!.altLabels], p.id).toContain(p.phrase)
    }
  })

  it('forms a hierarchy: pytorch -> deep learning -> machine learning', () => {
    expect(taxonomy.byId.get('pytorch')!.broader).toContain('deep-learning')
    expect(taxonomy.byId.get('deep-learning')!.broader).toContain('machine-learning')
    const roots = taxonomy.concepts.filter((c) => c.broader.length === 0)
    expect(roots.length).toBeLessThan(taxonomy.concepts.length / 10)
  })

  it('builds a matcher whose rule file refers only to existing concepts and labels', () => {
    const { matcher, problems: all } = shippedMatcher()
    expect(all.filter((p) => p.severity === 'error')).toEqual([])
    expect(all).toEqual([])
    expect(matcher.labelCount).toBeGreaterThan(3000)
  })

  it('finds each planted phrase in a plain sentence', () => {
    const { matcher } = shippedMatcher()
    for (const p of PLANTED_SKILLS) {
      const r = matcher.mapText(`We are looking for experience with ${p.phrase} and Kubernetes.`)
      expect(r.mentions.map((m) => m.conceptId), p.phrase).toContain(p.id)
    }
  })
})
