import { z } from 'zod';
import { MAX_JOB_TIMEOUT_MS } from '../job-time-limit.js';
import { MetricsSchema } from '../model.js';
import { SweepNameSchema } from '../sweep/name.js';

/** 128-bit job key in lower-case hex (see shared/job-identity.ts). */
export const JobKeySchema = z.string().regex(/^[0-9a-f]{32}$/, 'a job key is 32 lower-case hex digits');

/** A safe non-negative integer seed. */
export const SeedSchema = z.number().int().min(0).max(Number.MAX_SAFE_INTEGER);

/** A varied parameter value: the only kinds a sweep range produces. */
export const PointValueSchema = z.union([z.number(), z.string(), z.boolean()]);
/** The varied parameters of one job (fixed ones live in sweep.json). */
export const PointSchema = z.record(z.string(), PointValueSchema);
export type Point = z.infer<typeof PointSchema>;

/** One finished job, one line of `<results>/<name>/results/<writer>.ndjson`. */
export const ResultRecordSchema = z.object({
  v: z.literal(1),
  key: JobKeySchema,
  sweepHash: z.string().min(8),
  model: z.string(),
  modelVersion: z.string(),
  replicate: z.number().int().min(0),
  seed: SeedSchema,
  point: PointSchema,
  metrics: MetricsSchema,
  /** Which process wrote it, and which invocation of that process. */
  writer: z.string(),
  run: z.string(),
  finishedAt: z.string(),
  elapsedMs: z.number().min(0),
});
export type ResultRecord = z.infer<typeof ResultRecordSchema>;

export const FailureKindSchema = z.enum([
  /** The payload or parameters can never run (validation). Not retried. */
  'invalid',
  /** The worker lacks this model or model version. */
  'unsupported',
  /** The simulation threw. */
  'exception',
  /** The job exceeded its time limit. */
  'timeout',
  /** The process running it died (crash, stall). */
  'crashed',
]);
export type FailureKind = z.infer<typeof FailureKindSchema>;

/** One failed attempt, one line of `<results>/<name>/failures/<writer>.ndjson`. */
export const FailureRecordSchema = z.object({
  v: z.literal(1),
  key: JobKeySchema,
  sweepHash: z.string().min(8),
  kind: FailureKindSchema,
  message: z.string(),
  point: PointSchema,
  replicate: z.number().int().min(0),
  writer: z.string(),
  run: z.string(),
  at: z.string(),
  attempt: z.number().int().min(1),
});
export type FailureRecord = z.infer<typeof FailureRecordSchema>;

/**
 * Everything a worker needs to run one job without reading sweep.json:
 * the full parameter set is carried, and re-validated by the model's schema.
 */
export const JobPayloadSchema = z
  .object({
    v: z.literal(1),
    sweep: z.object({
      name: SweepNameSchema,
      hash: z.string().regex(/^[0-9a-f]{64}$/),
    }),
    key: JobKeySchema,
    model: z.string().max(100),
    modelVersion: z.string().max(50),
    params: z.record(z.string(), z.unknown()),
    point: PointSchema,
    replicate: z.number().int().min(0).max(1_000_000),
    seed: SeedSchema,
    /** The sweep's root seed, so a worker can check that `seed` is the job's (shared/job-identity.ts). */
    rootSeed: SeedSchema,
    /** The sweep's jobTimeoutMs, when it sets one (shared/job-time-limit.ts); not part of the job's identity. */
    timeoutMs: z.number().int().min(1).max(MAX_JOB_TIMEOUT_MS).optional(),
  })
  // Nothing else: a payload never carries a command, a path or code (workers run only their own registered models).
  .strict();
export type JobPayload = z.infer<typeof JobPayloadSchema>;
