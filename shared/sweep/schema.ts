import { z } from 'zod';
import { FORMULA_LIMITS } from '../formula/formula-limits.js';
import { MAX_JOB_TIMEOUT_MS } from '../job-time-limit.js';
import { DEFAULT_MODEL_ID } from '../models/registry.js';
import { MAX_BATCH_TRIALS } from '../queue/batch-size.js';
import { RefineSchema } from '../refine/schema.js';
import {
  DEFAULT_SAMPLER,
  SAMPLER_KINDS,
  SAMPLERS,
  type SamplerDescriptor,
  type SamplerKind,
} from '../samplers/index.js';
import { BinsSchema } from './bins.js';
import { SWEEP_LIMITS } from './limits.js';
import { SweepNameSchema } from './name.js';
import { RangeSchema } from './ranges.js';

export type { SamplerKind } from '../samplers/index.js';

const POINTS_RULE = `a whole number from 1 to ${SWEEP_LIMITS.sampledPoints}`;

const PointsSchema = z
  .number({ error: `points must be ${POINTS_RULE}` })
  .int(`points must be ${POINTS_RULE}`)
  .min(1, `points must be ${POINTS_RULE}`)
  .max(SWEEP_LIMITS.sampledPoints, `points must be ${POINTS_RULE}`)
  .describe('Number of parameter points to draw');

/** `{ kind }` for a product sampler, `{ kind, points }` for a drawing one. */
type SamplerObject =
  | z.ZodObject<{ kind: z.ZodLiteral<SamplerKind> }, z.core.$strict>
  | z.ZodObject<{ kind: z.ZodLiteral<SamplerKind>; points: typeof PointsSchema }, z.core.$strict>;

const samplerObject = (sampler: SamplerDescriptor<SamplerKind>): SamplerObject =>
  sampler.needsPoints
    ? z
        .object({ kind: z.literal(sampler.kind), points: PointsSchema })
        .strict()
        .describe(sampler.help)
    : z
        .object({ kind: z.literal(sampler.kind) })
        .strict()
        .describe(sampler.help);

const drawing = SAMPLERS.filter((s) => s.needsPoints).map((s) => s.kind);

/** What the `sampler` field holds: `{ kind }`, plus `points` for a drawing sampler; one variant per registered sampler. */
type SamplerShape<S> = S extends { readonly kind: infer K; readonly needsPoints: true }
  ? { kind: K; points: number }
  : S extends { readonly kind: infer K }
    ? { kind: K }
    : never;
export type Sampler = SamplerShape<(typeof SAMPLERS)[number]>;

/**
 * The `sampler` field: one object shape per registered sampler, told apart
 * by `kind`. Built from the descriptors, so its static type is stated from
 * them too (a list built at run time cannot carry each variant's type).
 */
export const SamplerSchema = z
  .discriminatedUnion('kind', SAMPLERS.map(samplerObject) as [SamplerObject, ...SamplerObject[]], {
    error: (issue) =>
      issue.code === 'invalid_union' && issue.note === 'No matching discriminator'
        ? `sampler.kind must be one of ${SAMPLER_KINDS.join(', ')}`
        : `sampler must be { kind: ${SAMPLER_KINDS.join(' | ')} } (${drawing.join(', ')} also need points: ${POINTS_RULE})`,
  })
  .default({ kind: DEFAULT_SAMPLER }) as unknown as z.ZodDefault<z.ZodType<Sampler>>;

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
    log: z
      .array(z.string().max(100), { error: 'report.log is a list of varied parameter names' })
      .max(64)
      .optional()
      .describe(
        'Varied parameters drawn on a log axis (ranges with scale: log, and lists spaced by ratio, are drawn so anyway)',
      ),
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
const REPLICATES_RULE = `replicates must be a whole number from 1 to ${SWEEP_LIMITS.replicates}`;
const MODEL_RULE = 'model must be a model id of 1 to 100 characters';
const SEED_RULE = 'seed must be a whole number from 0 to 2^53 - 1';
const BATCH_RULE = `batch must be a whole number of trials per queue job from 1 to ${MAX_BATCH_TRIALS}`;
const TIMEOUT_RULE = `jobTimeoutMs must be a whole number of milliseconds from 1 to ${MAX_JOB_TIMEOUT_MS} (one week)`;

/** The sweep file. Unknown keys are rejected at every level. */
export const SweepFileSchema = z
  .object({
    name: SweepNameSchema,
    model: z
      .string({ error: MODEL_RULE })
      .min(1, MODEL_RULE)
      .max(100, MODEL_RULE)
      .default(DEFAULT_MODEL_ID)
      .describe('Model id'),
    seed: z
      .number({ error: SEED_RULE })
      .int(SEED_RULE)
      .min(0, SEED_RULE)
      .max(Number.MAX_SAFE_INTEGER, SEED_RULE)
      .default(0)
      .describe('Root seed; every job seed derives from it and the job key'),
    replicates: z
      .number({ error: REPLICATES_RULE })
      .int(REPLICATES_RULE)
      .min(1, REPLICATES_RULE)
      .max(SWEEP_LIMITS.replicates, REPLICATES_RULE)
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
    batch: z
      .number({ error: BATCH_RULE })
      .int(BATCH_RULE)
      .min(1, BATCH_RULE)
      .max(MAX_BATCH_TRIALS, BATCH_RULE)
      .optional()
      .describe(
        'Trials per queue job for submit (default: sized from the calibrated trial cost so one job takes about 1.5 s); does not change the sweep hash',
      ),
    jobTimeoutMs: z
      .number({ error: TIMEOUT_RULE })
      .int(TIMEOUT_RULE)
      .min(1, TIMEOUT_RULE)
      .max(MAX_JOB_TIMEOUT_MS, TIMEOUT_RULE)
      .optional()
      .describe(
        "Time limit of one job in ms; a job over it fails as timeout (default: the model's own, for bcpnn-sequences from its cost estimate, at least 60 s)",
      ),
  })
  .strict();

/** The normalised sweep (every default filled in). */
export type SweepSpec = z.output<typeof SweepFileSchema>;
/** What a person may write. */
export type SweepFileInput = z.input<typeof SweepFileSchema>;

/** Top-level field order of a normalised spec (sweep.json is written in it): the schema's own order. */
export const SPEC_FIELD_ORDER = Object.keys(SweepFileSchema.shape) as ReadonlyArray<keyof SweepSpec>;
