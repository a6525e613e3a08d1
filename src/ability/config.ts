/**
 * @module ability/config
 * The `ability` section of tides.config.json.
 */
import { z } from 'zod'

export const abilityConfigSchema = z
  .object({
    /** logistic scaling constant: 1 (logistic metric) or 1.702 (normal-ogive metric) */
    D: z.number().positive().default(1),
    /** ability estimator; MLE falls back to EAP where no finite maximum exists */
    method: z.enum(['eap', 'mle']).default('eap'),
    /** EAP prior */
    prior: z.object({ mean: z.number().default(0), sd: z.number().positive().default(1) }).strict().prefault({}),
    /** quadrature points for EAP and calibration (at least 41), spread over prior mean ± 6 SD */
    quadraturePoints: z.number().int().min(41).max(401).default(61),
    /** abilities older than this count with an inflated standard error and are shown as stale */
    staleAfterDays: z.number().int().positive().default(730),
    /** factor (>= 1) applied to the SE of a stale ability */
    seInflation: z.number().min(1).default(1.5),
    /** central probability of the coverage gap intervals */
    intervalLevel: z.number().gt(0).lt(1).default(0.95),
    /** aggregate groups smaller than this are suppressed on the dashboard and in reports */
    minGroupSize: z.number().int().min(1).default(5),
    /** item calibration (`tides run ability --calibrate`) */
    calibration: z
      .object({
        model: z.enum(['2pl', 'rasch']).default('2pl'),
        /** stop when no parameter moves more than this between EM cycles */
        tolerance: z.number().positive().default(1e-4),
        maxCycles: z.number().int().positive().default(500),
        /** items with fewer responses are reported and left uncalibrated */
        minResponses: z.number().int().min(1).default(30),
      })
      .strict()
      .prefault({}),
  })
  .strict()

export type AbilityConfig = z.infer<typeof abilityConfigSchema>
