import { deflateRawSync, inflateRawSync } from 'node:zlib';
import { z } from 'zod';
import { jobSeed } from '../job-identity.js';
import { type JobPayload, JobPayloadSchema, PointSchema, SeedSchema } from '../schemas/records.js';
import { SweepNameSchema } from '../sweep/name.js';
import { MAX_BATCH_TRIALS } from './batch-size.js';

/**
 * Largest body a batch may unpack to (characters of JSON). A real batch is
 * about 40 characters per trial plus each point's parameters once; this
 * bound keeps a hostile payload from unpacking to gigabytes.
 */
export const MAX_BATCH_BODY_CHARS = 8 << 20;

/** One trial of a batch: its replicate number and job key (its seed is derived from the key). */
type BatchTrialEntry = [replicate: number, key: string];

const KEY_PATTERN = /^[0-9a-f]{32}$/;
const isTrialEntry = (value: unknown): boolean =>
  Array.isArray(value) &&
  value.length === 2 &&
  Number.isInteger(value[0]) &&
  (value[0] as number) >= 0 &&
  (value[0] as number) <= 1_000_000 &&
  typeof value[1] === 'string' &&
  KEY_PATTERN.test(value[1]);

/**
 * The trials of a group, checked in one loop rather than element by element:
 * a worker's main thread checks up to 1,000 of them while its threads wait,
 * and per-element checks were 0.6 ms of a 1 ms unpack (measured). Each trial
 * is checked again in full as a job of its own, in the thread that runs it.
 */
const TrialsSchema = z.custom<BatchTrialEntry[]>(
  (value) => Array.isArray(value) && value.length >= 1 && value.length <= MAX_BATCH_TRIALS && value.every(isTrialEntry),
  { message: `must list 1 to ${MAX_BATCH_TRIALS} trials, each [replicate, job key of 32 lower-case hex digits]` },
);

/** Consecutive trials of one parameter point: the parameters are carried once for all of them. */
const GroupSchema = z
  .object({
    params: z.record(z.string(), z.unknown()),
    point: PointSchema,
    trials: TrialsSchema,
  })
  .strict();

/** What the packed text of a batch holds. */
const BatchBodySchema = z
  .object({
    model: z.string().max(100),
    modelVersion: z.string().max(50),
    rootSeed: SeedSchema,
    groups: z.array(GroupSchema).min(1).max(MAX_BATCH_TRIALS),
    /** The sweep's jobTimeoutMs: every trial's time limit (shared/job-time-limit.ts), when the sweep sets one. */
    timeoutMs: JobPayloadSchema.shape.timeoutMs,
  })
  .strict();
type BatchBody = z.infer<typeof BatchBodySchema>;

/**
 * A queue job of several trials as stored: the sweep in clear (a worker
 * checks the folder name before anything else), the trial count (counted
 * without unpacking), and the trials packed (raw deflate, base64): trial keys
 * are random hex, which packs to about 20 bytes a key, and parameters that
 * repeat from point to point pack to almost nothing.
 */
export const BatchPayloadSchema = z
  .object({
    v: z.literal(1),
    sweep: z.object({ name: SweepNameSchema, hash: z.string().regex(/^[0-9a-f]{64}$/) }).strict(),
    trials: z.number().int().min(1).max(MAX_BATCH_TRIALS),
    packed: z.string().max(MAX_BATCH_BODY_CHARS),
  })
  .strict();
export type BatchPayload = z.infer<typeof BatchPayloadSchema>;

/** One trial as planned, as far as a batch needs it. */
export interface BatchTrial {
  readonly key: string;
  readonly replicate: number;
  readonly point: Readonly<Record<string, string | number | boolean>>;
  readonly params: Readonly<Record<string, unknown>>;
}

/** Pack planned trials (in sweep order) into one queue job's payload. */
export function packBatch(
  sweep: { readonly name: string; readonly hash: string; readonly rootSeed: number; readonly timeoutMs?: number },
  model: { readonly id: string; readonly version: string },
  trials: readonly BatchTrial[],
): BatchPayload {
  if (trials.length < 1 || trials.length > MAX_BATCH_TRIALS) {
    throw new RangeError(`a batch holds 1 to ${MAX_BATCH_TRIALS} trials, not ${trials.length}`);
  }
  const groups: BatchBody['groups'] = [];
  let last: BatchTrial | undefined;
  for (const trial of trials) {
    // Trials of one point come next to each other in sweep order and share their parameter object.
    if (last !== undefined && last.params === trial.params && last.point === trial.point) {
      groups[groups.length - 1]?.trials.push([trial.replicate, trial.key]);
    } else {
      groups.push({ params: { ...trial.params }, point: { ...trial.point }, trials: [[trial.replicate, trial.key]] });
    }
    last = trial;
  }
  const body: BatchBody = {
    model: model.id,
    modelVersion: model.version,
    rootSeed: sweep.rootSeed,
    groups,
    ...(sweep.timeoutMs === undefined ? {} : { timeoutMs: sweep.timeoutMs }),
  };
  return {
    v: 1,
    sweep: { name: sweep.name, hash: sweep.hash },
    trials: trials.length,
    packed: deflateRawSync(Buffer.from(JSON.stringify(body))).toString('base64'),
  };
}

/** Whether stored job data claims to be a batch (it is checked in full by unpackBatch). */
export function looksLikeBatch(data: unknown): boolean {
  return typeof data === 'object' && data !== null && 'packed' in data;
}

/**
 * The trials of a checked batch. Their keys are at hand; a trial's payload
 * (with its seed, one hash each) is built when asked for, so a worker builds
 * each as it hands the trial to a thread instead of all 1,000 at once, which
 * held its main thread for about 2 ms while the threads ran dry.
 */
export class BatchTrials {
  /** Trial keys in batch order. */
  readonly keys: readonly string[];
  private readonly groupOf: readonly number[];
  private readonly replicates: readonly number[];

  constructor(
    private readonly sweep: BatchPayload['sweep'],
    private readonly body: BatchBody,
  ) {
    const keys: string[] = [];
    const groupOf: number[] = [];
    const replicates: number[] = [];
    body.groups.forEach((group, at) => {
      for (const [replicate, key] of group.trials) {
        keys.push(key);
        groupOf.push(at);
        replicates.push(replicate);
      }
    });
    this.keys = keys;
    this.groupOf = groupOf;
    this.replicates = replicates;
  }

  get length(): number {
    return this.keys.length;
  }

  /** The payload of trial `index` (0-based, batch order), as the trial has it as a job of its own. */
  at(index: number): JobPayload {
    const key = this.keys[index];
    const group = this.body.groups[this.groupOf[index] ?? -1];
    if (key === undefined || group === undefined)
      throw new RangeError(`a batch of ${this.length} trials has no trial ${index}`);
    const { model, modelVersion, rootSeed, timeoutMs } = this.body;
    return {
      v: 1,
      sweep: this.sweep,
      key,
      model,
      modelVersion,
      params: group.params,
      point: group.point,
      replicate: this.replicates[index] as number,
      seed: jobSeed(rootSeed, key),
      rootSeed,
      ...(timeoutMs === undefined ? {} : { timeoutMs }),
    };
  }

  /** Every trial's payload, in batch order. */
  payloads(): JobPayload[] {
    return this.keys.map((_, index) => this.at(index));
  }
}

export type UnpackedBatch =
  | { readonly ok: true; readonly sweepName: string; readonly trials: BatchTrials }
  | { readonly ok: false; readonly message: string };

/**
 * The single-trial payloads of a batch, each of which is then checked as any
 * job is (key from model, version, parameters and replicate; see
 * shared/job-identity.ts). The seed is derived from the key by the one
 * definition, so it is the seed the trial has as a job of its own. A batch
 * that does not unpack, or whose trial count or keys do not add up, is
 * refused whole.
 */
export function unpackBatch(data: unknown): UnpackedBatch {
  const outer = BatchPayloadSchema.safeParse(data);
  if (!outer.success) {
    const detail = outer.error.issues
      .slice(0, 5)
      .map((i) => `payload.${i.path.map(String).join('.')}: ${i.message}`)
      .join('; ');
    return { ok: false, message: `invalid batch payload: ${detail}` };
  }
  let text: string;
  try {
    text = inflateRawSync(Buffer.from(outer.data.packed, 'base64'), { maxOutputLength: MAX_BATCH_BODY_CHARS }).toString(
      'utf8',
    );
  } catch (error) {
    return {
      ok: false,
      message: `invalid batch payload: payload.packed does not unpack (${String(error).slice(0, 200)})`,
    };
  }
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch {
    return { ok: false, message: 'invalid batch payload: payload.packed does not hold JSON' };
  }
  const body = BatchBodySchema.safeParse(raw);
  if (!body.success) {
    const detail = body.error.issues
      .slice(0, 5)
      .map((i) => `payload.packed.${i.path.map(String).join('.')}: ${i.message}`)
      .join('; ');
    return { ok: false, message: `invalid batch payload: ${detail}` };
  }
  const trials = new BatchTrials(outer.data.sweep, body.data);
  const keys = new Set(trials.keys);
  if (keys.size !== trials.length) {
    const twice = trials.keys.find((key, at) => trials.keys.indexOf(key) !== at);
    return { ok: false, message: `invalid batch payload: trial ${twice} appears twice` };
  }
  if (trials.length !== outer.data.trials) {
    return {
      ok: false,
      message: `invalid batch payload: payload.trials says ${outer.data.trials} but it packs ${trials.length}`,
    };
  }
  return { ok: true, sweepName: outer.data.sweep.name, trials };
}
