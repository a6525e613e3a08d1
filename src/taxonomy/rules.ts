/**
 * @module taxonomy/rules
 * Context and case rules for labels, read from a small INI-like rule file (format in
 * taxonomy/README.md). Sections: `[defaults]`, named word lists `[@name]`, a concept `[id]`, or
 * one label of a concept `[id: Label]`. Keys: case, evidence, when, near, window, not-next,
 * not-prev, stem, stem-exclude (and infer in [defaults]). Every problem names file and line.
 */
import type { Problem } from './types.ts'

export type CaseMode = 'any' | 'exact' | 'exact-or-upper'
export type EvidenceKind = 'near' | 'skills'
export type EvidenceWhen = 'never' | 'always' | 'at-start'

/** The rule fields a section may set; unset fields fall back to the next level. */
export interface RuleFields {
  caseMode?: CaseMode
  evidence?: EvidenceKind[]
  when?: EvidenceWhen
  near?: string[]
  window?: number
  notNext?: string[]
  notPrev?: string[]
  stem?: boolean
  stemExclude?: string[]
}

export interface RuleSection extends RuleFields {
  conceptId: string
  /** the label as written in the header, when the section is for one label */
  label?: string
  line: number
}

export interface RuleSet {
  file: string
  infer: boolean
  window: number
  stemExclude: string[]
  lists: Map<string, string[]>
  sections: RuleSection[]
  problems: Problem[]
}

/** An empty rule set: inference on, default window. */
export function emptyRules(file = '(none)'): RuleSet {
  return { file, infer: true, window: 8, stemExclude: [], lists: new Map(), sections: [], problems: [] }
}

const LIST_KEYS = new Set(['near', 'not-next', 'not-prev', 'stem-exclude', 'words'])

/**
 * Parses rule-file text.
 * @example
 * parseRules('[go: Go]\ncase = exact\nevidence = near, skills\nnear = golang, goroutines\n', 'r.txt').sections[0].caseMode
 * // => 'exact'
 */
export function parseRules(text: string, file: string): RuleSet {
  const rules = emptyRules(file)
  const problems = rules.problems
  type Current = { kind: 'defaults' } | { kind: 'list'; name: string; line: number } | { kind: 'section'; section: RuleSection } | { kind: 'none' }
  let current: Current = { kind: 'none' }
  const rawLists = new Map<string, { words: string[]; line: number }>()
  const pendingLists: { target: string[]; raw: string[]; line: number }[] = []

  const lines = text.split(/\r?\n/)
  for (let n = 0; n < lines.length; n++) {
    const lineNo = n + 1
    const line = (lines[n] ?? '').replace(/(^|\s)#.*$/, '').trim()
    if (!line) continue
    const header = /^\[(.*)\]$/.exec(line)
    if (header) {
      const inside = (header[1] ?? '').trim()
      if (inside === 'defaults') current = { kind: 'defaults' }
      else if (inside.startsWith('@')) {
        const name = inside.slice(1).trim()
        if (!/^[a-z0-9-]+$/i.test(name)) {
          problems.push({ file, line: lineNo, message: `bad list name "${inside}"`, severity: 'error' })
          current = { kind: 'none' }
        } else {
          current = { kind: 'list', name, line: lineNo }
          rawLists.set(name, { words: [], line: lineNo })
        }
      } else {
        const colon = inside.indexOf(':')
        const conceptId = (colon >= 0 ? inside.slice(0, colon) : inside).trim()
        const label = colon >= 0 ? inside.slice(colon + 1).trim() : undefined
        if (!conceptId || /\s/.test(conceptId) || label === '') {
          problems.push({ file, line: lineNo, message: `bad section header "[${inside}]" (expected [concept-id] or [concept-id: Label])`, severity: 'error' })
          current = { kind: 'none' }
        } else {
          const section: RuleSection = { conceptId, line: lineNo, ...(label !== undefined ? { label } : {}) }
          rules.sections.push(section)
          current = { kind: 'section', section }
        }
      }
      continue
    }
    const kv = /^([a-z-]+)\s*=\s*(.*)$/.exec(line)
    if (!kv) {
      problems.push({ file, line: lineNo, message: `cannot read "${line}" (expected key = value)`, severity: 'error' })
      continue
    }
    const key = kv[1]!
    const value = kv[2]!.trim()
    const list = LIST_KEYS.has(key) ? value.split(',').map((w) => w.trim()).filter(Boolean) : []
    const bad = (msg: string) => problems.push({ file, line: lineNo, field: key, message: msg, severity: 'error' })
    if (current.kind === 'none') {
      bad('key outside any section')
      continue
    }
    if (current.kind === 'list') {
      if (key !== 'words') bad(`list [@${current.name}] takes only "words"`)
      else rawLists.get(current.name)!.words.push(...list)
      continue
    }
    if (current.kind === 'defaults') {
      if (key === 'infer') {
        if (value === 'on' || value === 'off') rules.infer = value === 'on'
        else bad(`infer must be on or off, not "${value}"`)
      } else if (key === 'window') {
        const w = Number(value)
        if (Number.isInteger(w) && w >= 1 && w <= 50) rules.window = w
        else bad(`window must be an integer from 1 to 50, not "${value}"`)
      } else if (key === 'stem-exclude') {
        pendingLists.push({ target: rules.stemExclude, raw: list, line: lineNo })
      } else bad('unknown key in [defaults] (infer, window, stem-exclude)')
      continue
    }
    const s = current.section
    switch (key) {
      case 'case':
        if (value === 'any' || value === 'exact' || value === 'exact-or-upper') s.caseMode = value
        else bad(`case must be any, exact or exact-or-upper, not "${value}"`)
        break
      case 'evidence': {
        const kinds = value.split(',').map((w) => w.trim()).filter(Boolean)
        if (kinds.length === 1 && kinds[0] === 'none') {
          s.evidence = []
          s.when = 'never'
        } else if (kinds.length > 0 && kinds.every((k) => k === 'near' || k === 'skills')) {
          s.evidence = kinds as EvidenceKind[]
          s.when ??= 'always'
        } else bad(`evidence must be none, or near and/or skills, not "${value}"`)
        break
      }
      case 'when':
        if (value === 'always' || value === 'at-start' || value === 'never') s.when = value
        else bad(`when must be always, at-start or never, not "${value}"`)
        break
      case 'window': {
        const w = Number(value)
        if (Number.isInteger(w) && w >= 1 && w <= 50) s.window = w
        else bad(`window must be an integer from 1 to 50, not "${value}"`)
        break
      }
      case 'stem':
        if (value === 'yes' || value === 'no') s.stem = value === 'yes'
        else bad(`stem must be yes or no, not "${value}"`)
        break
      case 'near':
        s.near = []
        pendingLists.push({ target: s.near, raw: list, line: lineNo })
        break
      case 'not-next':
        s.notNext = []
        pendingLists.push({ target: s.notNext, raw: list, line: lineNo })
        break
      case 'not-prev':
        s.notPrev = []
        pendingLists.push({ target: s.notPrev, raw: list, line: lineNo })
        break
      case 'stem-exclude':
        s.stemExclude = []
        pendingLists.push({ target: s.stemExclude, raw: list, line: lineNo })
        break
      default:
        bad('unknown key (case, evidence, when, near, window, not-next, not-prev, stem, stem-exclude)')
    }
  }
  // expand @list references now that every list is known (lists may be defined after use)
  for (const name of rawLists.keys()) rules.lists.set(name, [])
  for (const [name, l] of rawLists) rules.lists.get(name)!.push(...expand(l.words, l.line, rawLists, problems, file, new Set([name])))
  for (const p of pendingLists) p.target.push(...expand(p.raw, p.line, rawLists, problems, file, new Set()))
  return rules
}

function expand(
  words: string[],
  line: number,
  lists: Map<string, { words: string[]; line: number }>,
  problems: Problem[],
  file: string,
  seen: Set<string>,
): string[] {
  const out: string[] = []
  for (const w of words) {
    if (!w.startsWith('@')) {
      out.push(w)
      continue
    }
    const name = w.slice(1)
    const l = lists.get(name)
    if (!l) problems.push({ file, line, message: `unknown word list ${w}`, severity: 'error' })
    else if (seen.has(name)) problems.push({ file, line, message: `word list ${w} refers to itself`, severity: 'error' })
    else out.push(...expand(l.words, l.line, lists, problems, file, new Set([...seen, name])))
  }
  return out
}
