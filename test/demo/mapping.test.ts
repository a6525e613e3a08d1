/**
 * The real map path finds what the demo planted: the shipped taxonomy's matcher, run over generated
 * postings (title, text and the schema.org `skills` field), reports the planted skills each posting
 * was generated with, and finds the invented terms nowhere (they are for candidate-term discovery).
 */
import { describe, expect, it } from 'vitest'
import { demoMonths } from '../../src/demo/calendar.ts'
import { PLANTED_SKILLS } from '../../src/demo/planted.ts'
import { generatePostings } from '../../src/demo/postings.ts'
import { renderHtml, renderPlain } from '../../src/demo/text.ts'
import { shippedMatcher } from '../../src/taxonomy/index.ts'

describe('shipped matcher on demo postings', () => {
  it('recovers the planted skills of each posting (recall >= 97%, precision >= 99% per skill)', () => {
    const { matcher } = shippedMatcher()
    const planted = new Set(PLANTED_SKILLS.map((p) => p.id))
    const tp: Record<string, number> = {}
    const fn: Record<string, number> = {}
    const fp: Record<string, number> = {}
    let n = 0
    generatePostings({ seed: 21, months: demoMonths('2025-06-15', 36), perMonth: 60 }, (p) => {
      // alternate the renderings the sources publish
      const body = n++ % 2 === 0 ? renderPlain(p.parts) : renderHtml(p.parts).replace(/<[^>]+>/g, ' ').replace(/&amp;/g, '&').replace(/&#39;/g, "'")
      const found = new Set(matcher.map({ text: `${p.title}\n${body}`, skills: p.skillsField ?? undefined }).mentions.map((m) => m.conceptId))
      const truth = new Set(p.skillIds.filter((id) => planted.has(id)))
      for (const id of truth) (found.has(id) ? tp : fn)[id] = ((found.has(id) ? tp : fn)[id] ?? 0) + 1
      for (const id of found) if (planted.has(id) && !truth.has(id)) fp[id] = (fp[id] ?? 0) + 1
      expect(found.has('quillstream') || found.has('brackenmesh')).toBe(false)
    })
    expect(n).toBeGreaterThan(2000)
    for (const id of planted) {
      const t = tp[id] ?? 0
      if (t + (fn[id] ?? 0) < 30) continue
      expect(t / (t + (fn[id] ?? 0)), `${id} recall`).toBeGreaterThanOrEqual(0.97)
      expect(t / (t + (fp[id] ?? 0)), `${id} precision`).toBeGreaterThanOrEqual(0.99)
    }
  })
})
