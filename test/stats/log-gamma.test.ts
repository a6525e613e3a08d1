import { describe, it, expect } from 'vitest'
import { logGamma } from '../../src/stats/log-gamma.ts'

describe('logGamma', () => {
  it('matches exact factorials (Γ(n) = (n−1)!)', () => {
    // exact identity: ln Γ(n) = ln((n−1)!), factorials computed here in exact integer arithmetic
    let factorial = 1
    for (let n = 1; n <= 20; n++) {
      expect(logGamma(n)).toBeCloseTo(Math.log(factorial), 12)
      factorial *= n
    }
  })

  it('matches Γ(1/2) = √π and Γ(3/2) = √π/2 (exact identities)', () => {
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 13)
    expect(logGamma(1.5)).toBeCloseTo(0.5 * Math.log(Math.PI) - Math.log(2), 13)
  })

  it('satisfies the recurrence Γ(x+1) = xΓ(x) across small and large arguments', () => {
    for (const x of [0.01, 0.3, 0.7, 2.5, 17.25, 150.5, 1000.1]) {
      expect(logGamma(x + 1) - logGamma(x)).toBeCloseTo(Math.log(x), 10)
    }
  })

  it('stays finite where Γ itself overflows', () => {
    // Stirling: ln Γ(x) ≈ (x − 1/2) ln x − x + ln √(2π) + 1/(12x) (common practice, no source)
    const x = 1000
    const stirling = (x - 0.5) * Math.log(x) - x + 0.5 * Math.log(2 * Math.PI) + 1 / (12 * x)
    expect(logGamma(x)).toBeCloseTo(stirling, 8)
  })

  it('rejects non-positive and non-finite arguments', () => {
    expect(() => logGamma(0)).toThrow(/positive/)
    expect(() => logGamma(-1)).toThrow(/positive/)
    expect(() => logGamma(Number.NaN)).toThrow(/positive/)
    expect(() => logGamma(Infinity)).toThrow(/positive/)
  })
})
