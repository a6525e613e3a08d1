/**
 * Evaluates the shipped taxonomy's matcher on the hand-labelled sets: micro precision and recall
 * over (document, concept) pairs of direct mentions (rollups are not counted; they follow from the
 * hierarchy). set.jsonl (160 documents) was used while building the taxonomy and its rules: its
 * misses led to new altLabels and rules, so its figures are optimistic. holdout.jsonl (40 documents)
 * was written and labelled afterwards and not used for tuning. Both are printed, and their union.
 * Prints every miss and false match for review unless --quiet.
 * Usage: npx tsx test/taxonomy/eval/evaluate.ts [--quiet]
 */
import fs from 'node:fs'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { shippedMatcher } from '../../../src/taxonomy/index.ts'

export interface LabelledDocument {
  id: string
  kind: 'posting' | 'request'
  text: string
  skills?: unknown
  expected: string[]
}

export interface Evaluation {
  documents: number
  truePositives: number
  falsePositives: number
  falseNegatives: number
  precision: number
  recall: number
  f1: number
  errors: { id: string; missed: string[]; extra: { id: string; text: string }[] }[]
  unknownIds: { id: string; concept: string }[]
}

const here = path.dirname(fileURLToPath(import.meta.url))
export const EVAL_SET = path.join(here, 'set.jsonl')
export const HOLDOUT_SET = path.join(here, 'holdout.jsonl')

export function readSet(file = EVAL_SET): LabelledDocument[] {
  return fs
    .readFileSync(file, 'utf8')
    .split('\n')
    .filter((l) => l.trim())
    .map((l, i) => {
      try {
        return JSON.parse(l) as LabelledDocument
      } catch (err) {
        throw new Error(`${file}:${i + 1}: ${(err as Error).message}`)
      }
    })
}

export function evaluate(docs: readonly LabelledDocument[] = readSet()): Evaluation {
  const { matcher } = shippedMatcher()
  let tp = 0
  let fp = 0
  let fn = 0
  const errors: Evaluation['errors'] = []
  const unknownIds: Evaluation['unknownIds'] = []
  for (const d of docs) {
    for (const c of d.expected) if (!matcher.taxonomy.byId.has(c)) unknownIds.push({ id: d.id, concept: c })
    const mapping = matcher.map({ text: d.text, ...(d.skills !== undefined ? { skills: d.skills } : {}) })
    const got = new Map(mapping.mentions.map((m) => [m.conceptId, m.spans[0]?.text ?? '']))
    const expected = new Set(d.expected)
    const missed = [...expected].filter((c) => !got.has(c))
    const extra = [...got].filter(([c]) => !expected.has(c)).map(([id, text]) => ({ id, text }))
    tp += expected.size - missed.length
    fn += missed.length
    fp += extra.length
    if (missed.length || extra.length) errors.push({ id: d.id, missed, extra })
  }
  const precision = tp + fp === 0 ? 1 : tp / (tp + fp)
  const recall = tp + fn === 0 ? 1 : tp / (tp + fn)
  return { documents: docs.length, truePositives: tp, falsePositives: fp, falseNegatives: fn, precision, recall, f1: (2 * precision * recall) / (precision + recall), errors, unknownIds }
}

function print(name: string, docs: readonly LabelledDocument[], r: Evaluation, details: boolean): void {
  const postings = docs.filter((d) => d.kind === 'posting').length
  process.stdout.write(`\n${name}: ${r.documents} documents (${postings} postings, ${r.documents - postings} requests), ${r.truePositives + r.falseNegatives} labelled skills\n`)
  process.stdout.write(`  micro precision ${r.precision.toFixed(3)} (goal >= 0.95)  correct ${r.truePositives}, false ${r.falsePositives}\n`)
  process.stdout.write(`  micro recall    ${r.recall.toFixed(3)} (goal >= 0.90)  missed ${r.falseNegatives}\n`)
  process.stdout.write(`  F1              ${r.f1.toFixed(3)}\n`)
  if (r.unknownIds.length) process.stdout.write(`  labels naming no concept: ${r.unknownIds.map((u) => `${u.id}:${u.concept}`).join(', ')}\n`)
  if (!details) return
  for (const e of r.errors) {
    const missed = e.missed.length ? `missed ${e.missed.join(', ')}` : ''
    const extra = e.extra.length ? `extra ${e.extra.map((x) => `${x.id} ("${x.text}")`).join(', ')}` : ''
    process.stdout.write(`  ${e.id}: ${[missed, extra].filter(Boolean).join('; ')}\n`)
  }
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const details = !process.argv.includes('--quiet')
  const dev = readSet(EVAL_SET)
  const holdout = readSet(HOLDOUT_SET)
  print('development set (used for tuning)', dev, evaluate(dev), details)
  print('held-out set (not used for tuning)', holdout, evaluate(holdout), details)
  print('all', [...dev, ...holdout], evaluate([...dev, ...holdout]), false)
}
