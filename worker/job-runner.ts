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
    const result = this.append(request, outcome);
    if (result.ok || result.failure !== undefined) await this.options.sinks.durable(request.folder);
    return result;
  }

  /**
   * Runs the trials of one queue job (a batch), each checked and recorded as
   * a job of its own: one record (result or failure) per trial, in a shard of
   * `folder`. As many trials are in the pool as a thread holds (pool.appetite
   * per thread), so a thread never waits for this batch's next trial; records are appended as trials end and one
   * group commit at the end covers all of them, so the batch is reported only
   * once every record it made is durable. Rejects as execute() does; records
   * of the trials that ended before stay (a re-run writes equal records,
   * which the store reads once).
   */
  async executeBatch(folder: string, payloads: readonly unknown[], attempt: number): Promise<JobResult[]> {
    const { pool } = this.options;
    const results: JobResult[] = [];
    const ahead: Promise<JobOutcome>[] = [];
    let handed = 0;
    // As many trials in the pool as one thread holds, plus one: more while trials are short.
    const topUp = (): void => {
      const window = Math.ceil(pool.appetite / pool.threads);
      while (handed < payloads.length && ahead.length < window) ahead.push(pool.run(payloads[handed++]));
    };
    try {
      for (let i = 0; i < payloads.length; i++) {
        topUp();
        const current = ahead.shift() as Promise<JobOutcome>;
        results.push(this.append({ payload: payloads[i], folder, attempt }, await current));
      }
    } finally {
      // Trials started ahead of a failure: let them settle so their rejections are not left unhandled.
      for (const pending of ahead) pending.catch(() => undefined);
    }
    await this.options.sinks.durable(folder);
    return results;
  }

  /** The outcome as a result, its record appended to the folder's shard (not yet synced). */
  private append(request: JobRequest, outcome: JobOutcome): JobResult {
    const { sinks } = this.options;
    if (outcome.ok) {
      sinks.writerFor(request.folder).appendResult(outcome.record);
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
    }
    return { ok: false, kind: outcome.kind, message: outcome.message, retryable: outcome.retryable, failure };
  }
}
