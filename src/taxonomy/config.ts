/**
 * @module taxonomy/config
 * The `taxonomy` section of tides.config.json.
 */
import { z } from 'zod'

export const taxonomyConfigSchema = z
  .object({
    /** taxonomy file loaded when the database has no concepts yet (CSV or SKOS Turtle); default: the shipped one */
    file: z.string().optional(),
    /** context and case rules for ambiguous labels; default: the shipped rules file (or NAME.rules beside `file`) */
    rulesFile: z.string().optional(),
    /** documents to map before the work is spread over worker threads */
    workerThreshold: z.number().int().min(1).default(20_000),
    /** worker threads for large mapping runs (0: one per core, at most 8) */
    workers: z.number().int().min(0).max(64).default(0),
    /**
     * a bulk map (the mentions-by-concept index dropped for the run, built once at its end): at least
     * this many documents wait and they outnumber the documents already counted
     */
    bulkMapMin: z.number().int().min(1).default(20_000),
    candidates: z
      .object({
        /** recompute candidate terms after each map run that mapped documents */
        enabled: z.boolean().default(true),
        /**
         * hours between recomputations of the candidate list (a review aid, not part of the demand
         * figures): within them a map run keeps the stored list unless the taxonomy changed; 0
         * recomputes after every map run that mapped documents
         */
        refreshHours: z.number().min(0).default(24),
        /** months in the recent window compared with the months before */
        recentMonths: z.number().int().min(1).max(60).default(6),
        /** months looked at in all (recent window and the earlier months it is compared with) */
        windowMonths: z.number().int().min(2).max(240).default(24),
        /** documents in the recent window that must contain a phrase */
        minRecentDocs: z.number().int().min(1).default(5),
        /** recent rate over earlier rate needed */
        minRatio: z.number().min(1).default(2),
        /** false-discovery rate for the adjusted p-values */
        alpha: z.number().gt(0).lt(1).default(0.05),
        /** most candidates kept */
        maxTerms: z.number().int().min(1).max(1000).default(50),
      })
      .strict()
      .prefault({}),
  })
  .strict()

export type TaxonomyConfig = z.infer<typeof taxonomyConfigSchema>
