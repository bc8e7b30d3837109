import { z } from 'zod';
import { FORMULA_LIMITS } from '../formula/formula-limits.js';
import { DEFAULT_MODEL_ID } from '../models/registry.js';
import { RefineSchema } from '../refine/schema.js';
import { BinsSchema } from './bins.js';
import { SweepNameSchema } from './name.js';
import { RangeSchema } from './ranges.js';

export * from './ranges.js';

/** Hard ceilings that keep a typo from planning a billion jobs. */
export const MAX_REPLICATES = 100_000;
export const MAX_SAMPLED_POINTS = 1_000_000;
export const MAX_GRID_POINTS = 5_000_000;

const PointsSchema = z
  .number({ error: `the random, lhs and sobol samplers need points: a whole number from 1 to ${MAX_SAMPLED_POINTS}` })
  .int('points must be a whole number')
  .min(1, 'points must be at least 1')
  .max(MAX_SAMPLED_POINTS, `points must be at most ${MAX_SAMPLED_POINTS}`)
  .describe('Number of parameter points to draw');

export const SamplerSchema = z
  .discriminatedUnion(
    'kind',
    [
      z
        .object({ kind: z.literal('grid') })
        .strict()
        .describe('Full product of the ranges'),
      z
        .object({ kind: z.literal('random'), points: PointsSchema })
        .strict()
        .describe('Independent uniform draws'),
      z
        .object({ kind: z.literal('lhs'), points: PointsSchema })
        .strict()
        .describe('Latin hypercube'),
      z
        .object({ kind: z.literal('sobol'), points: PointsSchema })
        .strict()
        .describe('Unscrambled Sobol sequence'),
    ],
    { error: 'sampler.kind must be one of grid, random, lhs, sobol' },
  )
  .default({ kind: 'grid' });
export type Sampler = z.output<typeof SamplerSchema>;
export type SamplerKind = Sampler['kind'];

export const ReportSchema = z
  .object({
    x: z.string().optional().describe('Varied parameter on the horizontal axis'),
    y: z.string().optional().describe('Varied parameter on the vertical axis'),
    facet: z.string().optional().describe('Varied parameter with one panel per value'),
    metric: z
      .string()
      .regex(/^[A-Za-z_][A-Za-z0-9_]*$/, 'a metric name is a plain identifier such as success')
      .optional()
      .describe('Metric to show (default success)'),
    bins: BinsSchema.optional().describe('Bins per axis for sampled (non-grid) sweeps'),
  })
  .strict();
export type ReportSpec = z.output<typeof ReportSchema>;

/** A formula's text; its grammar is checked by shared/formula/parse-formula.ts. */
export const FormulaTextSchema = z
  .string({ error: 'a formula is a text, e.g. "10 / hypercolumns"' })
  .max(FORMULA_LIMITS.maxLength, `a formula has at most ${FORMULA_LIMITS.maxLength} characters`)
  .describe(
    'Formula over parameter names: numbers, + - * / % ^ (power), unary -, parentheses, < <= > >= == !=, a ? b : c, and min, max, abs, sqrt, exp, log, log2, log10, floor, ceil, round, pow',
  );

/** The sweep file. Unknown keys are rejected at every level. */
export const SweepFileSchema = z
  .object({
    name: SweepNameSchema,
    model: z.string().min(1).max(100).default(DEFAULT_MODEL_ID).describe('Model id'),
    seed: z
      .number({ error: 'seed must be a whole number from 0 to 2^53 - 1' })
      .int('seed must be a whole number from 0 to 2^53 - 1')
      .min(0, 'seed must be a whole number from 0 to 2^53 - 1')
      .max(Number.MAX_SAFE_INTEGER, 'seed must be a whole number from 0 to 2^53 - 1')
      .default(0)
      .describe('Root seed; every job seed derives from it and the job key'),
    replicates: z
      .number({ error: `replicates must be a whole number from 1 to ${MAX_REPLICATES}` })
      .int(`replicates must be a whole number from 1 to ${MAX_REPLICATES}`)
      .min(1, `replicates must be a whole number from 1 to ${MAX_REPLICATES}`)
      .max(MAX_REPLICATES, `replicates must be a whole number from 1 to ${MAX_REPLICATES}`)
      .default(1)
      .describe('Independent trials per parameter point'),
    fixed: z.record(z.string(), z.json()).default({}).describe('Parameters held at one value'),
    vary: z
      .record(z.string(), RangeSchema)
      .default({})
      .describe('Parameters that change, in order (first changes slowest on a grid)'),
    derived: z
      .record(z.string(), FormulaTextSchema, { error: 'derived maps parameter names to formula texts' })
      .default({})
      .describe(
        'Parameters computed at every point from the others: name -> formula, e.g. weightGain: "10 / hypercolumns"',
      ),
    sampler: SamplerSchema,
    report: ReportSchema.default({}),
    refine: RefineSchema.optional().describe('Adaptive replicates and midpoints around the border of a rate'),
  })
  .strict();

/** The normalised sweep (every default filled in). */
export type SweepSpec = z.output<typeof SweepFileSchema>;
/** What a person may write. */
export type SweepFileInput = z.input<typeof SweepFileSchema>;

/** Top-level field order of a normalised spec (sweep.json is written in it). */
export const SPEC_FIELD_ORDER = [
  'name',
  'model',
  'seed',
  'replicates',
  'fixed',
  'vary',
  'derived',
  'sampler',
  'report',
  'refine',
] as const;
