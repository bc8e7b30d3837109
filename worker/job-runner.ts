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
 * The trials of a batch: an array of payloads, or a batch's trials whose
 * payloads are built as they are handed to a thread (shared/queue/batch-payload.ts).
 */
export interface TrialPayloads {
  readonly length: number;
  at(index: number): unknown;
}

/** A batch being run by executeBatch(). */
interface BatchInFlight {
  readonly folder: string;
  readonly payloads: TrialPayloads;
  readonly attempt: number;
  /** By trial index, filled as trials end. */
  readonly results: JobResult[];
  /** Trials handed to the pool so far (the next one's index). */
  handed: number;
  /** Trials whose record was appended. */
  settled: number;
  readonly done: (results: JobResult[]) => void;
  readonly fail: (error: Error) => void;
}

/**
 * Runs one job end to end: thread pool -> outcome -> result or failure
 * record -> shard -> durable as the sinks' policy asks. The embedded runner
 * and the queue worker both run every job through here, so a job gives the
 * same record in either. Rejects with a PoolUnavailable error when the pool
 * did not run the job, and with ShardWriteError when the record could not be
 * written (the job then counts as not done).
 */
export class JobRunner {
  /** Batches with trials not yet settled, oldest first. */
  private readonly batches: BatchInFlight[] = [];
  /** Trials of batches handed to the pool and not yet settled. */
  private batchTrialsInPool = 0;

  constructor(private readonly options: JobRunnerOptions) {}

  get threads(): number {
    return this.options.pool.threads;
  }

  async execute(request: JobRequest): Promise<JobResult> {
    const outcome = await this.options.pool.run(request.payload);
    const result = this.append(request.folder, request.attempt, outcome);
    if (result.ok || result.failure !== undefined) await this.options.sinks.durable(request.folder);
    return result;
  }

  /**
   * Runs the trials of one queue job (a batch), each checked and recorded as
   * a job of its own: one record (result or failure) per trial, in a shard of
   * `folder`. Trials go to the pool oldest batch first, keeping the pool's
   * appetite of them in flight: a batch runs on every thread while the next
   * one waits behind it, so the threads go on with the next batch while one
   * syncs and is reported (batches fed side by side all ended together, and
   * the threads waited for their turn-over). Records are appended as trials
   * end and one group commit at the end covers all of them, so the batch is
   * reported only once every record it made is durable. Rejects as execute()
   * does; records of the trials that ended before stay (a re-run writes equal
   * records, which the store reads once).
   */
  async executeBatch(folder: string, payloads: TrialPayloads, attempt: number): Promise<JobResult[]> {
    if (payloads.length === 0) return [];
    const results = await new Promise<JobResult[]>((done, fail) => {
      this.batches.push({
        folder,
        payloads,
        attempt,
        results: new Array(payloads.length),
        handed: 0,
        settled: 0,
        done,
        fail,
      });
      this.feedBatches();
    });
    await this.options.sinks.durable(folder);
    return results;
  }

  /** Hands trials of the oldest batches to the pool until it holds its appetite of them. */
  private feedBatches(): void {
    const { pool } = this.options;
    while (this.batchTrialsInPool < pool.appetite) {
      const batch = this.batches.find((b) => b.handed < b.payloads.length);
      if (batch === undefined) return;
      const index = batch.handed++;
      this.batchTrialsInPool++;
      pool.run(batch.payloads.at(index)).then(
        (outcome) => this.settleTrial(batch, index, outcome),
        (error: unknown) => this.failBatch(batch, error),
      );
    }
  }

  private settleTrial(batch: BatchInFlight, index: number, outcome: JobOutcome): void {
    this.batchTrialsInPool--;
    // A batch that failed already is re-run whole: what its other trials did is not needed.
    if (this.batches.includes(batch)) {
      try {
        batch.results[index] = this.append(batch.folder, batch.attempt, outcome);
        batch.settled++;
        if (batch.settled === batch.payloads.length) {
          this.batches.splice(this.batches.indexOf(batch), 1);
          batch.done(batch.results);
        }
      } catch (error) {
        this.failBatch(batch, error, false);
      }
    }
    this.feedBatches();
  }

  /** The batch fails with its first error; its trials not yet handed over never run. */
  private failBatch(batch: BatchInFlight, error: unknown, fromPool = true): void {
    if (fromPool) this.batchTrialsInPool--;
    const at = this.batches.indexOf(batch);
    if (at >= 0) {
      this.batches.splice(at, 1);
      batch.fail(error instanceof Error ? error : new Error(String(error)));
    }
    this.feedBatches();
  }

  /** The outcome as a result, its record appended to the folder's shard (not yet synced). */
  private append(folder: string, attempt: number, outcome: JobOutcome): JobResult {
    const { sinks } = this.options;
    if (outcome.ok) {
      // Valid by construction (run-job.ts `succeeded`): not checked again on this thread, the busiest with short jobs.
      sinks.writerFor(folder).appendCheckedResult(outcome.record);
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
        attempt,
      };
      sinks.writerFor(folder).appendFailure(failure);
    }
    return { ok: false, kind: outcome.kind, message: outcome.message, retryable: outcome.retryable, failure };
  }
}
