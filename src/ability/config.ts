/**
 * @module ability/config
 * The `ability` section of tides.config.json.
 */
import { z } from 'zod'

export const abilityConfigSchema = z
  .object({
    /** logistic scaling constant: 1 (logistic metric) or 1.702 (normal-ogive metric) */
    D: z.number().positive().default(1),
    method: z.enum(['eap', 'mle']).default('eap'),
    prior: z.object({ mean: z.number().default(0), sd: z.number().positive().default(1) }).strict().prefault({}),
    /** abilities older than this count with an inflated standard error and are shown as stale */
    staleAfterDays: z.number().int().positive().default(730),
    /** aggregate groups smaller than this are suppressed on the dashboard */
    minGroupSize: z.number().int().min(1).default(5),
  })
  .strict()
