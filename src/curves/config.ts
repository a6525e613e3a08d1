/**
 * @module curves/config
 * The `curves` section of tides.config.json: test levels, thresholds of the lifecycle states,
 * seasonal terms, change points, emergence and the forecast. Every key has a default, documented
 * beside it; src/curves/state.ts spells out how the thresholds decide a state.
 */
import { z } from 'zod'

const weightsSchema = z
  .object({
    /** weight of the external postings series in the combined demand index */
    external: z.number().min(0).default(0.7),
    /** weight of the internal requests series */
    internal: z.number().min(0).default(0.3),
  })
  .strict()
  .refine((w) => w.external + w.internal > 0, { message: 'at least one weight must be positive' })

const changeSchema = z
  .object({
    /** months on each side of a breakpoint, at least */
    minSegment: z.number().int().min(3).default(6),
    /** level of the (search-corrected) test for a change in slope; Mann–Kendall must also confirm it */
    alpha: z.number().gt(0).lt(1).default(0.05),
    /** breakpoints are searched among the latest this-many months (recent changes are what matter now) */
    windowMonths: z.number().int().min(6).default(24),
  })
  .strict()

const emergenceSchema = z
  .object({
    /** share of documents a skill must reach to count as present in a month (0.2%) */
    floor: z.number().gt(0).lt(1).default(0.002),
    /** consecutive months at or above the floor */
    sustain: z.number().int().min(1).default(3),
    /** months of history before, mostly below the floor ("from near zero") */
    quiet: z.number().int().min(1).default(6),
    /** mentions needed in each of those months, so one mention in a thin month is not support */
    minMentions: z.number().int().min(1).default(3),
    /** a skill that emerged within this many months and is rising is 'emerging' */
    windowMonths: z.number().int().min(1).default(24),
  })
  .strict()

const burstsSchema = z
  .object({
    /** ratio between burst levels' mention probabilities (Kleinberg's s) */
    s: z.number().gt(1).default(2),
    /** cost of moving up a level, in units of ln(months) (Kleinberg's γ) */
    gamma: z.number().gt(0).default(1),
  })
  .strict()

export const curvesConfigSchema = z
  .object({
    /** false discovery rate for Benjamini-Hochberg across all skills */
    q: z.number().gt(0).lt(1).default(0.05),
    /** confidence level of the intervals for growth, half-life and slopes */
    level: z.number().gt(0).lt(1).default(0.95),
    /** months ahead to forecast */
    horizonMonths: z.number().int().min(1).max(60).default(12),
    /** weights of the combined demand index */
    weights: weightsSchema.prefault({}),
    /** only the latest this-many months are fitted */
    windowMonths: z.number().int().min(12).max(240).default(60),
    /** fewer observed months than this: insufficient-evidence */
    minMonths: z.number().int().min(6).default(12),
    /** fewer mentions than this over the window: insufficient-evidence */
    minMentions: z.number().int().min(1).default(20),
    /** a significant trend smaller than this fractional change per year is still 'steady' */
    minAnnualChange: z.number().min(0).default(0.05),
    /** 'steady' needs the growth interval inside ±steadyBand per year; wider and unflagged is insufficient-evidence */
    steadyBand: z.number().gt(0).default(0.25),
    /**
     * a skill already steady stays steady while its growth interval is inside ±steadyBand × (1 +
     * steadyHysteresis) (±30% with the defaults): an interval hovering at the band's edge would
     * otherwise flip steady <-> insufficient-evidence, and send a state change, on every run
     */
    steadyHysteresis: z.number().min(0).default(0.2),
    /** a declining skill whose fitted latest share is below this is 'fading' (0.5% of documents) */
    fadingShare: z.number().gt(0).lt(1).default(0.005),
    /** level of the Mann-Kendall test that must agree with the regression */
    mannKendallAlpha: z.number().gt(0).lt(1).default(0.05),
    /** month-of-year terms: 'auto' chooses 0..maxHarmonics Fourier pairs by QAIC; 'off' never */
    seasonal: z.enum(['auto', 'off']).default('auto'),
    maxHarmonics: z.number().int().min(1).max(6).default(2),
    /** seasonal terms are only considered with at least this many observed months */
    seasonalMinMonths: z.number().int().min(12).default(24),
    change: changeSchema.prefault({}),
    emergence: emergenceSchema.prefault({}),
    bursts: burstsSchema.prefault({}),
    /** rolling-origin evaluation: number of one-step origins at the end of the series */
    forecastOrigins: z.number().int().min(1).max(36).default(12),
  })
  .strict()

export type CurvesConfig = z.infer<typeof curvesConfigSchema>

/** All defaults, for callers that have no config file (tests, benchmarks). */
export const DEFAULT_CURVES_CONFIG: CurvesConfig = curvesConfigSchema.parse({})
