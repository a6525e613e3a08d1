/**
 * @module taxonomy/validate
 * Turns concept records from any loader into a validated taxonomy. Every problem is reported with
 * the file and line of the record concerned, and only the offending part is dropped:
 * - a broader id that names no concept: the link is dropped;
 * - a broader link that closes a cycle: that link is dropped (the cycle's members are named);
 * - a label (after case-folding and tokenising, as the matcher sees it) already used by another
 *   concept: the label stays with the first concept and is dropped from the later one;
 * - a repeated id: the later record is dropped.
 */
import { labelKey } from './tokenizer.ts'
import type { Concept, ConceptRecord, LoadResult, Problem } from './types.ts'

/**
 * Validates records and builds the taxonomy.
 * @example
 * const r = buildTaxonomy([{ id: 'a', prefLabel: 'A', altLabels: [], hiddenLabels: [], broader: ['zz'], type: 'hard', source: { file: 'f.csv', line: 2 } }])
 * r.problems[0].message // => 'broader "zz" of concept "a" names no concept; link dropped'
 */
export function buildTaxonomy(records: readonly ConceptRecord[], earlier: readonly Problem[] = []): LoadResult {
  const problems: Problem[] = [...earlier]
  const byId = new Map<string, ConceptRecord>()
  for (const r of records) {
    const first = byId.get(r.id)
    if (first) {
      problems.push({ ...at(r), field: 'id', message: `duplicate id "${r.id}" (first at ${first.source.file}:${first.source.line}); record dropped`, severity: 'error' })
      continue
    }
    byId.set(r.id, r)
  }
  const kept = [...byId.values()]

  // broader links: unknown targets and self-links
  const broader = new Map<string, string[]>()
  for (const r of kept) {
    const links: string[] = []
    for (const b of r.broader) {
      if (b === r.id) problems.push({ ...at(r), field: 'broader', message: `concept "${r.id}" is its own broader concept; link dropped`, severity: 'error' })
      else if (!byId.has(b)) problems.push({ ...at(r), field: 'broader', message: `broader "${b}" of concept "${r.id}" names no concept; link dropped`, severity: 'error' })
      else if (!links.includes(b)) links.push(b)
    }
    broader.set(r.id, links)
  }
  breakCycles(kept, broader, byId, problems)

  // labels: one concept per label key
  const owner = new Map<string, ConceptRecord>()
  const concepts: Concept[] = []
  for (const r of kept) {
    const keepLabel = (label: string, field: string): boolean => {
      const key = labelKey(label)
      if (key === '') {
        problems.push({ ...at(r), field, message: `label "${label}" of concept "${r.id}" has no letters or digits; dropped`, severity: 'error' })
        return false
      }
      const o = owner.get(key)
      if (o && o.id !== r.id) {
        problems.push({ ...at(r), field, message: `label "${label}" of concept "${r.id}" is already a label of concept "${o.id}" (${o.source.file}:${o.source.line}); dropped here`, severity: 'error' })
        return false
      }
      owner.set(key, r)
      return true
    }
    const prefOk = keepLabel(r.prefLabel, 'prefLabel')
    const altLabels = r.altLabels.filter((l) => keepLabel(l, 'altLabel'))
    const hiddenLabels = r.hiddenLabels.filter((l) => keepLabel(l, 'hiddenLabel'))
    const exact = new Set<string>([r.prefLabel])
    for (const l of [...r.altLabels, ...r.hiddenLabels]) {
      if (exact.has(l)) problems.push({ ...at(r), field: 'altLabel', message: `label "${l}" is given twice for concept "${r.id}" (SKOS Reference S13: pref, alt and hidden labels are disjoint)`, severity: 'warning' })
      exact.add(l)
    }
    if (!prefOk) {
      problems.push({ ...at(r), field: 'prefLabel', message: `concept "${r.id}" keeps its prefLabel for display but it is not matched`, severity: 'warning' })
    }
    concepts.push({
      id: r.id,
      prefLabel: r.prefLabel,
      altLabels,
      hiddenLabels,
      broader: broader.get(r.id) ?? [],
      type: r.type,
      source: r.source,
      ...(prefOk ? {} : { unmatchedPrefLabel: true }),
    })
  }
  problems.sort((a, b) => (a.file === b.file ? a.line - b.line : a.file < b.file ? -1 : 1))
  return { taxonomy: { concepts, byId: new Map(concepts.map((c) => [c.id, c])) }, problems }
}

/**
 * Depth-first search over broader links; each back edge closes a cycle, which is reported with
 * its members and dropped.
 */
function breakCycles(
  kept: readonly ConceptRecord[],
  broader: Map<string, string[]>,
  byId: Map<string, ConceptRecord>,
  problems: Problem[],
): void {
  const state = new Map<string, 1 | 2>() // 1 on the stack, 2 finished
  for (const root of kept) {
    if (state.has(root.id)) continue
    const stack: { id: string; next: number }[] = [{ id: root.id, next: 0 }]
    state.set(root.id, 1)
    while (stack.length > 0) {
      const top = stack[stack.length - 1]!
      const links = broader.get(top.id) ?? []
      if (top.next >= links.length) {
        state.set(top.id, 2)
        stack.pop()
        continue
      }
      const target = links[top.next]!
      const s = state.get(target)
      if (s === 1) {
        const from = stack.findIndex((f) => f.id === target)
        const members = [...stack.slice(from).map((f) => f.id), target]
        const r = byId.get(top.id)!
        const where = members.slice(0, -1).map((m) => `${m} (line ${byId.get(m)?.source.line ?? '?'})`).join(', ')
        problems.push({ ...at(r), field: 'broader', message: `broader cycle ${members.join(' -> ')} among ${where}; link ${top.id} -> ${target} dropped`, severity: 'error' })
        links.splice(top.next, 1)
        continue
      }
      top.next++
      if (s === undefined) {
        state.set(target, 1)
        stack.push({ id: target, next: 0 })
      }
    }
  }
}

function at(r: ConceptRecord): { file: string; line: number } {
  return { file: r.source.file, line: r.source.line }
}
