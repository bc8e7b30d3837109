import type { FailureKind, FailureRecord, ResultRecord } from '../shared/schemas/records.js';
import type { JobOutcome } from './run-job.js';
import type { ShardSinks } from './shard-sinks.js';
import type { ThreadPool } from './thread-pool.js';

/** Failure messages are cut to this length in records (a stack or a zod dump can be long). */
export const FAILURE_MESSAGE_CHARS = 2_000;

export interface JobRunnerOptions {
  readonly pool: ThreadPool;
  readonly sinks: ShardSinks;
  /** This invocation (written into failure records, as the pool writes it into results). */
  readonly run: string;
}

export interface JobRequest {
  /** Untrusted payload, validated again inside the thread. */
  readonly payload: unknown;
  /** Sweep folder the records go to: a plain folder name under the results root, checked by the caller. */
  readonly folder: string;
  /** 1 for the first try of this job. */
  readonly attempt: number;
}

export type JobResult =
  | { readonly ok: true; readonly record: ResultRecord }
  | {
      readonly ok: false;
      readonly kind: FailureKind;
      readonly message: string;
      readonly retryable: boolean;
      /** Undefined when the payload was too broken to name its job. */
      readonly failure: FailureRecord | undefined;
    };

/**
 * Runs one job end to end: thread pool -> outcome -> result or failure
 * record -> shard -> durable as the sinks' policy asks. The embedded runner
 * and the queue worker both run every job through here, so a job gives the
 * same record in either. Rejects with a PoolUnavailable error when the pool
 * did not run the job, and with ShardWriteError when the record could not be
 * written (the job then counts as not done).
 */
export class JobRunner {
  constructor(private readonly options: JobRunnerOptions) {}

  get threads(): number {
    return this.options.pool.threads;
  }

  async execute(request: JobRequest): Promise<JobResult> {
    const outcome = await this.options.pool.run(request.payload);
    return this.record(request, outcome);
  }

  private async record(request: JobRequest, outcome: JobOutcome): Promise<JobResult> {
    const { sinks } = this.options;
    if (outcome.ok) {
      sinks.writerFor(request.folder).appendResult(outcome.record);
      await sinks.durable(request.folder);
      return outcome;
    }
    let failure: FailureRecord | undefined;
    if (outcome.payload !== undefined) {
      const payload = outcome.payload;
      failure = {
        v: 1,
        key: payload.key,
        sweepHash: payload.sweep.hash,
        kind: outcome.kind,
        message: outcome.message.slice(0, FAILURE_MESSAGE_CHARS),
        point: payload.point,
        replicate: payload.replicate,
        writer: sinks.writer,
        run: this.options.run,
        at: new Date().toISOString(),
        attempt: request.attempt,
      };
      sinks.writerFor(request.folder).appendFailure(failure);
      await sinks.durable(request.folder);
    }
    return { ok: false, kind: outcome.kind, message: outcome.message, retryable: outcome.retryable, failure };
  }
}
