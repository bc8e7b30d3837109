import { z } from 'zod';

/** Most refinement rounds a sweep may ask for (each can double a line's points). */
export const MAX_REFINE_ROUNDS = 10;
/** Same ceiling as the top-level replicates. */
const MAX_REFINE_REPLICATES = 100_000;

const replicateCount = (field: string) =>
  z
    .number({ error: `${field} must be a whole number from 1 to ${MAX_REFINE_REPLICATES}` })
    .int(`${field} must be a whole number from 1 to ${MAX_REFINE_REPLICATES}`)
    .min(1, `${field} must be a whole number from 1 to ${MAX_REFINE_REPLICATES}`)
    .max(MAX_REFINE_REPLICATES, `${field} must be a whole number from 1 to ${MAX_REFINE_REPLICATES}`);

/**
 * The `refine` section: makes a grid sweep adaptive. Points get replicates in
 * batches until their Wilson interval leaves `level`, and midpoints are added
 * between neighbours on different sides of it (or undecided).
 */
export const RefineSchema = z
  .object({
    metric: z
      .string()
      .regex(/^[A-Za-z_][A-Za-z0-9_]*$/, 'refine.metric is a plain identifier such as success')
      .default('success')
      .describe('Metric whose rate defines the border (true/false or 1/0 per trial)'),
    level: z
      .number({ error: 'refine.level must be a number strictly between 0 and 1' })
      .gt(0, 'refine.level must be strictly between 0 and 1')
      .lt(1, 'refine.level must be strictly between 0 and 1')
      .default(0.5)
      .describe('Rate that defines the border'),
    confidence: z
      .number({ error: 'refine.confidence must be a number from 0.5 to 0.9999' })
      .min(0.5, 'refine.confidence must be from 0.5 to 0.9999')
      .max(0.9999, 'refine.confidence must be from 0.5 to 0.9999')
      .default(0.95)
      .describe('Overall confidence of each point decision (split over its looks)'),
    replicates: z
      .object({
        start: replicateCount('refine.replicates.start'),
        max: replicateCount('refine.replicates.max'),
      })
      .strict()
      .refine((r) => r.max >= r.start, {
        message: 'refine.replicates.max must be at least refine.replicates.start',
        path: ['max'],
      })
      .describe('Replicates per point: first batch, and the most a point may get'),
    rounds: z
      .number({ error: `refine.rounds must be a whole number from 0 to ${MAX_REFINE_ROUNDS}` })
      .int(`refine.rounds must be a whole number from 0 to ${MAX_REFINE_ROUNDS}`)
      .min(0, `refine.rounds must be a whole number from 0 to ${MAX_REFINE_ROUNDS}`)
      .max(MAX_REFINE_ROUNDS, `refine.rounds must be a whole number from 0 to ${MAX_REFINE_ROUNDS}`)
      .default(3)
      .describe('Rounds of midpoint insertion'),
    along: z
      .array(z.string())
      .min(1, 'refine.along needs at least one parameter')
      .optional()
      .describe('Varied parameters to insert midpoints along (default: report.x, else every numeric one)'),
  })
  .strict();

export type RefineSpec = z.output<typeof RefineSchema>;
/** The numbers the design needs (no parameter names). */
export type RefineSettings = Pick<RefineSpec, 'level' | 'confidence' | 'replicates' | 'rounds'>;
