/**
 * @module taxonomy/config
 * The `taxonomy` section of tides.config.json.
 */
import { z } from 'zod'

export const taxonomyConfigSchema = z
  .object({
    /** taxonomy file loaded when the database has no concepts yet (CSV or SKOS Turtle); default: the shipped one */
    file: z.string().optional(),
    /** context and case rules for ambiguous labels; default: the shipped rules file */
    rulesFile: z.string().optional(),
  })
  .strict()
