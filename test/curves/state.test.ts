import { describe, it, expect } from 'vitest'
import { classifyState } from '../../src/curves/state.ts'
import type { StateEvidence } from '../../src/curves/state.ts'
import { DEFAULT_CURVES_CONFIG as CONFIG, curvesConfigSchema } from '../../src/curves/config.ts'

const declining: StateEvidence = {
  insufficientReason: null,
  annualGrowth: -0.2,
  growthLower: -0.28,
  growthUpper: -0.12,
  pValue: 1e-6,
  pAdjusted: 1e-5,
  mannKendall: { s: -300, pValue: 1e-5 },
  monthsSinceEmergence: null,
  fittedLatestShare: 0.04,
}

describe('classifyState', () => {
  it('declining needs BH, Mann–Kendall in the same direction and a large enough change', () => {
    expect(classifyState(declining, CONFIG).state).toBe('declining')
    expect(classifyState({ ...declining, pAdjusted: 0.06 }, CONFIG).state).not.toBe('declining')
    // Mann–Kendall pointing the other way, or too weak, blocks the flag
    expect(classifyState({ ...declining, mannKendall: { s: 40, pValue: 0.01 } }, CONFIG).flagged).toBe(false)
    expect(classifyState({ ...declining, mannKendall: { s: -40, pValue: 0.2 } }, CONFIG).flagged).toBe(false)
    // one-sided at 5%: a two-sided 0.09 in the right direction agrees
    expect(classifyState({ ...declining, mannKendall: { s: -40, pValue: 0.09 } }, CONFIG).state).toBe('declining')
  })

  it('fading is declining below the share floor', () => {
    const fading = classifyState({ ...declining, fittedLatestShare: 0.003 }, CONFIG)
    expect(fading.state).toBe('fading')
    expect(fading.reason).toMatch(/below 0.5%/)
    expect(classifyState({ ...declining, fittedLatestShare: 0.003 }, curvesConfigSchema.parse({ fadingShare: 0.002 })).state).toBe('declining')
  })

  it('rising and emerging: emerged within the window makes it emerging', () => {
    const rising: StateEvidence = { ...declining, annualGrowth: 0.4, growthLower: 0.3, growthUpper: 0.5, mannKendall: { s: 300, pValue: 1e-6 } }
    expect(classifyState(rising, CONFIG).state).toBe('rising')
    expect(classifyState({ ...rising, monthsSinceEmergence: 10 }, CONFIG).state).toBe('emerging')
    expect(classifyState({ ...rising, monthsSinceEmergence: 30 }, CONFIG).state).toBe('rising')
  })

  it('steady when the growth interval sits inside the band, also for a tiny but significant trend', () => {
    expect(classifyState({ ...declining, annualGrowth: 0.01, growthLower: -0.04, growthUpper: 0.06, pAdjusted: 0.7, mannKendall: { s: 5, pValue: 0.8 } }, CONFIG).state).toBe('steady')
    const tiny = classifyState({ ...declining, annualGrowth: -0.03, growthLower: -0.04, growthUpper: -0.02 }, CONFIG)
    expect(tiny.state).toBe('steady')
    expect(tiny.reason).toMatch(/smaller than 5.0% a year/)
  })

  it('insufficient-evidence for thin data or an unflagged trend with a wide interval', () => {
    expect(classifyState({ ...declining, insufficientReason: '4 months observed' }, CONFIG)).toEqual({ state: 'insufficient-evidence', reason: '4 months observed', flagged: false })
    const wide = classifyState({ ...declining, annualGrowth: -0.3, growthLower: -0.7, growthUpper: 0.4, pAdjusted: 0.3 }, CONFIG)
    expect(wide.state).toBe('insufficient-evidence')
    expect(wide.reason).toMatch(/wider than ±25%/)
    expect(classifyState({ ...declining, pAdjusted: null }, CONFIG).state).toBe('insufficient-evidence')
  })

  it('a steady skill stays steady while its interval is inside the wider band (hysteresis); others need the band itself', () => {
    // the interval -27% to +13%: outside ±25%, inside ±30% (= 25% x 1.2)
    const edge: StateEvidence = { ...declining, annualGrowth: -0.09, growthLower: -0.27, growthUpper: 0.13, pAdjusted: 0.55, mannKendall: { s: -20, pValue: 0.4 } }
    expect(classifyState(edge, CONFIG).state).toBe('insufficient-evidence')
    expect(classifyState(edge, CONFIG, 'insufficient-evidence').state).toBe('insufficient-evidence')
    expect(classifyState(edge, CONFIG, 'declining').state).toBe('insufficient-evidence')
    const kept = classifyState(edge, CONFIG, 'steady')
    expect(kept.state).toBe('steady')
    expect(kept.reason).toMatch(/still steady: the interval is inside ±30%, the band a steady skill keeps \(±25% to become steady\)/)
    // beyond the wider band it stops being steady; without hysteresis it would not be kept at all
    expect(classifyState({ ...edge, growthLower: -0.31 }, CONFIG, 'steady').state).toBe('insufficient-evidence')
    expect(classifyState(edge, curvesConfigSchema.parse({ steadyHysteresis: 0 }), 'steady').state).toBe('insufficient-evidence')
    // inside the band itself nothing changes, and the reason says nothing about hysteresis
    const inside = classifyState({ ...edge, growthLower: -0.2 }, CONFIG, 'steady')
    expect(inside.state).toBe('steady')
    expect(inside.reason).not.toMatch(/still steady/)
  })

  it('thresholds come from the config', () => {
    const strict = curvesConfigSchema.parse({ q: 0.001 })
    expect(classifyState({ ...declining, pAdjusted: 0.002 }, strict).flagged).toBe(false)
    const bigChange = curvesConfigSchema.parse({ minAnnualChange: 0.25 })
    expect(classifyState(declining, bigChange).state).toBe('steady')
  })
})
