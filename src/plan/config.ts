/**
 * @module plan/config
 * The `plan` section of tides.config.json (score weights, horizon, workforce assumptions).
 */
import { z } from 'zod'

export const planConfigSchema = z
  .object({
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
  })
  .strict()
