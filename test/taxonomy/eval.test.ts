import { describe, it, expect } from 'vitest'
import { evaluate, EVAL_SET, HOLDOUT_SET, readSet } from './eval/evaluate.ts'

describe('labelled evaluation set (invented postings and requests, labelled by hand)', () => {
  const dev = readSet(EVAL_SET)
  const holdout = readSet(HOLDOUT_SET)

  it('has at least 150 documents of both kinds, every label naming a concept', () => {
    const all = [...dev, ...holdout]
    expect(all.length).toBeGreaterThanOrEqual(150)
    expect(all.filter((d) => d.kind === 'request').length).toBeGreaterThanOrEqual(50)
    expect(new Set(all.map((d) => d.id)).size).toBe(all.length)
    expect(evaluate(all).unknownIds).toEqual([])
  })

  it('reaches micro precision >= 0.95 and recall >= 0.90 on all documents', () => {
    const r = evaluate([...dev, ...holdout])
    expect(r.precision).toBeGreaterThanOrEqual(0.95)
    expect(r.recall).toBeGreaterThanOrEqual(0.9)
  })

  it('reaches the goals on the held-out documents alone', () => {
    const r = evaluate(holdout)
    expect(r.precision).toBeGreaterThanOrEqual(0.95)
    expect(r.recall).toBeGreaterThanOrEqual(0.9)
  })
})
