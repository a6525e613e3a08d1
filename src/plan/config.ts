/**
 * @module plan/config
 * The `plan` section of tides.config.json (score weights, horizon, workforce assumptions, thresholds
 * of the course flags, adjacency and role-suggestion settings). Every setting has a default.
 */
import { z } from 'zod'

export const planConfigSchema = z
  .object({
    /** weights of the four parts of the needs score (see src/plan/needs.ts) */
    weights: z
      .object({
        momentum: z.number().min(0).default(0.4),
        gap: z.number().min(0).default(0.3),
        exposure: z.number().min(0).default(0.2),
        internalPull: z.number().min(0).default(0.1),
      })
      .strict()
      .prefault({}),
    /** quarters in the reskilling forecast */
    horizonQuarters: z.number().int().min(1).max(20).default(8),
    /** yearly attrition and hiring as fractions of headcount */
    attritionRate: z.number().min(0).max(1).default(0.1),
    hiringRate: z.number().min(0).max(1).default(0.08),
    /** role name -> occupation keywords or schema.org occupationalCategory codes */
    roleOccupations: z.record(z.string(), z.array(z.string())).default({}),
    seed: z.number().int().default(7),
    needs: z
      .object({
        /** a curve counts as significant when its adjusted p-value is at most this */
        alpha: z.number().gt(0).lt(1).default(0.05),
        /** momentum of a curve that is not significant is multiplied by this */
        insignificantDiscount: z.number().min(0).max(1).default(0.5),
        /** added to both shares before their ratio is taken, so that a start from zero stays finite */
        shareFloor: z.number().gt(0).max(0.1).default(0.001),
        /** an unassessed person counts as this fraction of a gap */
        unknownWeight: z.number().min(0).max(1).default(0.5),
        /** months in each of the two windows compared for the internal pull */
        pullMonths: z.number().int().min(1).max(24).default(6),
      })
      .strict()
      .prefault({}),
    adjacency: z
      .object({
        /** positive pointwise mutual information or cosine of co-occurrence vectors */
        method: z.enum(['ppmi', 'cosine']).default('ppmi'),
        /** postings that must mention both skills before an adjacency counts */
        minSupport: z.number().int().min(1).default(5),
        /** postings of the latest this many months are counted (0 = all) */
        months: z.number().int().min(0).default(24),
        /** rising skills listed per declining skill */
        topK: z.number().int().min(1).max(20).default(3),
      })
      .strict()
      .prefault({}),
    courses: z
      .object({
        /** share of a course's skills (with evidence) that must be declining or fading for "retire" */
        retireDecliningFraction: z.number().gt(0).max(1).default(0.75),
        /** the same, when the course's enrolments fell over the last year */
        retireFractionWhenEnrolmentsFall: z.number().gt(0).max(1).default(0.5),
        /** a course whose declining skills' demand-weighted share halves within this many months may be retired */
        retireHalvingMonths: z.number().positive().default(30),
        /** enrolment changes within this fraction count as flat */
        enrolmentTolerance: z.number().min(0).max(1).default(0.05),
        /** halving times beyond this many months are reported as "not within" */
        maxMonths: z.number().int().positive().default(240),
        /** rising skills named in a "refresh" flag */
        maxAdditions: z.number().int().min(1).default(3),
      })
      .strict()
      .prefault({}),
    suggestions: z
      .object({
        /** months in the recent window; the earlier window has the same length just before it */
        recentMonths: z.number().int().min(1).max(36).default(12),
        /** share of the role's recent postings that must ask for the skill */
        minShare: z.number().min(0).max(1).default(0.1),
        /** recent postings matched to the role needed before anything is suggested */
        minPostings: z.number().int().min(1).default(10),
        /** false discovery rate for the one-sided two-proportion tests of an increase (Benjamini–Hochberg) */
        alpha: z.number().gt(0).lt(1).default(0.05),
        /** relative rise of the role's share that a globally rising skill needs to be suggested without a significant test */
        minRise: z.number().min(0).default(0.25),
      })
      .strict()
      .prefault({}),
    reskilling: z
      .object({
        /** simulated paths for the interval */
        simulations: z.number().int().min(50).max(100_000).default(2000),
        /** central probability of the reported interval */
        interval: z.number().gt(0).lt(1).default(0.9),
        /** ability (theta) that counts as "strong" or "has it" where a role states no requirement */
        strongTheta: z.number().default(0),
        /** probability that a hire meets the requirement; null = the current rate among assessed staff */
        hireMeetRate: z.number().min(0).max(1).nullable().default(null),
        /** probability that an unassessed person meets the requirement when no one is assessed */
        unknownMeetRate: z.number().min(0).max(1).default(0.5),
      })
      .strict()
      .prefault({}),
  })
  .strict()

export type PlanConfig = z.infer<typeof planConfigSchema>
