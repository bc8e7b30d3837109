import { isErrorOf, issuesFromZod, ModelFailure } from '../shared/errors.js';
import { identityProblem, jobKeyPrefix } from '../shared/job-identity.js';
import { type JobTimeLimit, jobTimeLimit } from '../shared/job-time-limit.js';
import type { AnyModel } from '../shared/model.js';
import { findModel } from '../shared/models/registry.js';
import { type FailureKind, type JobPayload, JobPayloadSchema, type ResultRecord } from '../shared/schemas/records.js';
import { MalformedMetricsError, type ModelRun, runModel, runModelAsync } from './run-model.js';

/** Who is running the job: written into every record. */
export interface JobContext {
  readonly writer: string;
  readonly run: string;
}

export type JobOutcome =
  | { readonly ok: true; readonly record: ResultRecord }
  | {
      readonly ok: false;
      readonly kind: FailureKind;
      readonly message: string;
      /** Whether running it again could help (false for invalid or unsupported jobs). */
      readonly retryable: boolean;
      readonly payload: JobPayload | undefined;
    };

/**
 * Run one job from an untrusted payload. Never throws for a bad payload or a
 * simulation error: those become outcomes, so every caller (thread pool,
 * queue consumer) records them the same way.
 */
export function runJob(rawPayload: unknown, context: JobContext): JobOutcome {
  const prepared = prepareJob(rawPayload);
  if ('outcome' in prepared) return prepared.outcome;
  return runPrepared(prepared, context);
}

/** How a pool thread times its jobs (see shared/job-time-limit.ts). */
export interface JobTiming {
  /** --model-timeout of the process, when given. */
  readonly optionMs?: number | undefined;
  /** Told the job's time limit once the payload is checked, before the model runs. */
  readonly onLimit?: (limit: JobTimeLimit) => void;
}

/**
 * runJob for every kind of model: models that run in another process (a
 * program over the line protocol) or asynchronously give a promise, with
 * the job's key and its time limit (which such a model enforces itself; the
 * pool enforces it for the others). Pool threads run every job through here.
 */
export function runAnyJob(
  rawPayload: unknown,
  context: JobContext,
  timing: JobTiming = {},
): JobOutcome | Promise<JobOutcome> {
  const prepared = prepareJob(rawPayload);
  if ('outcome' in prepared) return prepared.outcome;
  const { model, payload, params } = prepared;
  const limit = jobTimeLimit(model, params, payload.timeoutMs, timing.optionMs);
  timing.onLimit?.(limit);
  if (model.runAsync === undefined) return runPrepared(prepared, context);
  return runModelAsync(model, params, payload.seed, { key: payload.key, timeoutMs: limit.ms }).then(
    (run) => succeeded(payload, run, context),
    (error: unknown) => failed(payload, error),
  );
}

interface PreparedJob {
  readonly payload: JobPayload;
  readonly model: AnyModel;
  readonly params: unknown;
}

/** The payload checked, its model found and its parameters validated; or the outcome that ends the job. */
function prepareJob(rawPayload: unknown): PreparedJob | { readonly outcome: JobOutcome } {
  const outcome = (o: JobOutcome): { readonly outcome: JobOutcome } => ({ outcome: o });
  const parsed = JobPayloadSchema.safeParse(rawPayload);
  if (!parsed.success) {
    const detail = issuesFromZod(parsed.error.issues, 'payload')
      .map((i) => `${i.path}: ${i.message}`)
      .join('; ');
    return outcome({
      ok: false,
      kind: 'invalid',
      message: `invalid job payload: ${detail}`,
      retryable: false,
      payload: undefined,
    });
  }
  const payload = parsed.data;
  // Key, seed and point must be what the payload's own content gives, or a
  // writer to the queue could file any result under a real job's key. Such a
  // job is refused without any record: a failure record would name a key it has no right to.
  let prefix: string;
  try {
    prefix = jobKeyPrefix(payload.model, payload.modelVersion, payload.params);
  } catch (error) {
    // Nested beyond the stack (a payload is at most 1 MiB, but that is deep enough).
    return outcome(misnamed(`the parameters cannot be put in canonical form (${String(error).slice(0, 200)})`));
  }
  const forged = identityProblem(payload, payload.params, payload.rootSeed, prefix);
  if (forged !== undefined) return outcome(misnamed(forged));
  const model = findModel(payload.model);
  if (model === undefined) {
    return outcome({
      ok: false,
      kind: 'unsupported',
      message: `this worker has no model "${payload.model}"`,
      retryable: false,
      payload,
    });
  }
  if (model.version !== payload.modelVersion) {
    return outcome({
      ok: false,
      kind: 'unsupported',
      message: `job needs ${payload.model} version ${payload.modelVersion}, this worker has version ${model.version}; run a worker built from the code version that planned the sweep`,
      retryable: false,
      payload,
    });
  }
  const params = model.params.safeParse(payload.params);
  if (!params.success) {
    const detail = issuesFromZod(params.error.issues, 'params')
      .map((i) => `${i.path}: ${i.message}`)
      .join('; ');
    return outcome({ ok: false, kind: 'invalid', message: `invalid parameters: ${detail}`, retryable: false, payload });
  }
  // The key covers the parameters as sent; the model must run exactly those (a
  // planned job carries every parameter, defaults included), not defaults filled in here.
  if (jobKeyPrefix(payload.model, payload.modelVersion, params.data as Record<string, unknown>) !== prefix) {
    return outcome(misnamed('the parameters leave out some the model runs with, so the key does not cover the run'));
  }
  return { payload, model, params: params.data };
}

/** A job whose key, seed or point is not its own: invalid, and nothing is recorded under the key it claims. */
function misnamed(problem: string): JobOutcome {
  return {
    ok: false,
    kind: 'invalid',
    message: `invalid job identity: ${problem}`,
    retryable: false,
    payload: undefined,
  };
}

function runPrepared({ payload, model, params }: PreparedJob, context: JobContext): JobOutcome {
  let run: ModelRun;
  try {
    run = runModel(model, params, payload.seed);
  } catch (error) {
    return failed(payload, error);
  }
  return succeeded(payload, run, context);
}

function failed(payload: JobPayload, error: unknown): JobOutcome {
  // A model that breaks the record format will do so again: no retry.
  if (isErrorOf(error, MalformedMetricsError))
    return { ok: false, kind: 'exception', message: error.message, retryable: false, payload };
  // A model that knows how it failed says so (kind, and whether another try could help).
  if (isErrorOf(error, ModelFailure))
    return { ok: false, kind: error.kind, message: error.message, retryable: error.retryable, payload };
  const message = error instanceof Error ? `${error.name}: ${error.message}` : String(error);
  return { ok: false, kind: 'exception', message, retryable: true, payload };
}

/**
 * The outcome of a run that ended well, with its result record. The record
 * is valid by construction: every part comes from the payload checked by
 * JobPayloadSchema, the metrics checked by MetricsSchema (run-model.ts), the
 * pool's context, or is made here. So the main thread writes it without a
 * second check (ShardWriter.appendCheckedResult): that check cost it about
 * 8% of its time on short jobs, where it is the bottleneck.
 */
export function succeeded(payload: JobPayload, run: ModelRun, context: JobContext): JobOutcome {
  const record: ResultRecord = {
    v: 1,
    key: payload.key,
    sweepHash: payload.sweep.hash,
    model: payload.model,
    modelVersion: payload.modelVersion,
    replicate: payload.replicate,
    seed: payload.seed,
    point: payload.point,
    metrics: run.metrics,
    writer: context.writer,
    run: context.run,
    finishedAt: new Date().toISOString(),
    elapsedMs: Math.round(run.elapsedMs * 1000) / 1000,
  };
  return { ok: true, record };
}
