/**
 * @module curves/config
 * The `curves` section of tides.config.json (thresholds of the lifecycle states, test levels, forecast).
 */
import { z } from 'zod'

export const curvesConfigSchema = z
  .object({
    /** false discovery rate for Benjamini-Hochberg across all skills */
    q: z.number().gt(0).lt(1).default(0.05),
    /** months ahead to forecast */
    horizonMonths: z.number().int().min(1).max(60).default(12),
    /** weights of the combined demand index */
    weights: z.object({ external: z.number().min(0).default(0.7), internal: z.number().min(0).default(0.3) }).strict().prefault({}),
  })
  .strict()
