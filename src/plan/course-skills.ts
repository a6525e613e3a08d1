/**
 * @module plan/course-skills
 * Resolves the skills of a course to concept ids: a tag is a concept id or one of its labels
 * (case-insensitive; a prefLabel wins over an altLabel of another concept). An untagged course's
 * skills are mapped from its title and marked inferred. Until the taxonomy matcher exposes a text
 * mapping function, titles are matched here on whole-word label occurrences, longest label first;
 * labels of one or two characters and labels marked case-sensitive must match their case exactly.
 */
import type { LabelRecord } from '../db/plan.ts'

export interface LabelIndex {
  ids: Set<string>
  /** lower-cased label -> concepts carrying it, pref labels first */
  byLabel: Map<string, { id: string; kind: string }[]>
  /** labels for title matching, longest first; the pattern is compiled on first use */
  patterns: { id: string; label: string; lower: string; exactCase: boolean; re: RegExp | null }[]
}

function escapeRegExp(s: string): string {
  return s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')
}

const KIND_ORDER: Record<string, number> = { pref: 0, alt: 1, hidden: 2 }

/** Builds the lookup structures from concept ids and labels. */
export function buildLabelIndex(conceptIds: Iterable<string>, labels: readonly LabelRecord[]): LabelIndex {
  const ids = new Set(conceptIds)
  const byLabel = new Map<string, { id: string; kind: string }[]>()
  for (const l of labels) {
    const key = l.label.trim().toLowerCase()
    if (!key) continue
    let list = byLabel.get(key)
    if (!list) byLabel.set(key, (list = []))
    if (!list.some((x) => x.id === l.concept_id && x.kind === l.kind)) list.push({ id: l.concept_id, kind: l.kind })
  }
  for (const list of byLabel.values()) list.sort((a, b) => (KIND_ORDER[a.kind] ?? 3) - (KIND_ORDER[b.kind] ?? 3) || (a.id < b.id ? -1 : 1))
  const patterns = labels
    .filter((l) => l.label.trim().length > 0)
    .map((l) => {
      const label = l.label.trim()
      return { id: l.concept_id, label, lower: label.toLowerCase(), exactCase: l.case_sensitive === 1 || label.length <= 2, re: null }
    })
    .sort((a, b) => b.label.length - a.label.length || (a.label < b.label ? -1 : 1))
  return { ids, byLabel, patterns }
}

/**
 * The concept a course tag refers to, or null.
 * @example resolveSkillRef(index, 'Kubernetes') // => 'kubernetes' (by label)
 */
export function resolveSkillRef(index: LabelIndex, ref: string): { id: string; by: 'id' | 'label' } | null {
  const trimmed = ref.trim()
  if (index.ids.has(trimmed)) return { id: trimmed, by: 'id' }
  const hits = index.byLabel.get(trimmed.toLowerCase())
  if (!hits || hits.length === 0) return null
  const best = hits[0]!
  // two different concepts sharing a label of the same kind: ambiguous, refuse to guess
  const rival = hits.find((h) => h.id !== best.id && h.kind === best.kind)
  return rival ? null : { id: best.id, by: 'label' }
}

/** Concepts whose labels occur as whole words in a course title; longer labels claim their span first. */
export function mapTitle(index: LabelIndex, title: string): { id: string; label: string }[] {
  const taken: [number, number][] = []
  const found = new Map<string, string>()
  const lowerTitle = title.toLowerCase()
  for (const p of index.patterns) {
    // a cheap substring test first: most labels never occur, and their patterns are never compiled
    if (found.has(p.id) || !lowerTitle.includes(p.lower)) continue
    p.re ??= new RegExp(`(?<![\\p{L}\\p{N}])${escapeRegExp(p.label)}(?![\\p{L}\\p{N}])`, p.exactCase ? 'u' : 'iu')
    const m = p.re.exec(title)
    if (!m) continue
    const start = m.index
    const end = start + m[0].length
    if (taken.some(([s, e]) => start < e && end > s)) continue
    taken.push([start, end])
    found.set(p.id, m[0])
  }
  return [...found].map(([id, label]) => ({ id, label })).sort((a, b) => (a.id < b.id ? -1 : 1))
}
