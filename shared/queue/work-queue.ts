/**
 * One queue job: a batch of trials (consecutive jobs of the sweep). Its key is
 * the key of the first trial of its block of the sweep (whether or not that
 * trial is still to run), so the same block always makes the same job and
 * adding it twice is noticed. Every count the queue reports is in trials.
 */
export interface QueueEntry {
  readonly key: string;
  /** Trials the job carries; 1 when left out. */
  readonly trials?: number;
  /** What a worker receives (a batch payload, shared/queue/batch-payload.ts, or one job's payload). */
  readonly payload: unknown;
}

export interface AddOptions {
  /** Also take jobs out of the failed set and queue them afresh (a new set of attempts). */
  readonly retryFailed: boolean;
}

/** What one add() call really did, in trials; exact even when several callers add the same jobs at once. */
export interface AddResult {
  /** Trials of the entries this call put in the queue. */
  readonly added: number;
  /** Entries already there (waiting, running, delayed, or finished and not gathered): left alone. */
  readonly present: number;
  /** Entries in the failed set, left there. */
  readonly failedKept: number;
  /** Entries taken out of the failed set and queued afresh by this call (retryFailed). */
  readonly retried: number;
}

/** A sweep's trials in the queue by the state of their jobs (a snapshot). */
export interface SweepQueueCounts {
  readonly waiting: number;
  readonly active: number;
  /** Waiting out a retry backoff. */
  readonly delayed: number;
  readonly failed: number;
}

export interface FinishedJob {
  readonly key: string;
  /** Trials the job carried. */
  readonly trials: number;
  /** Epoch milliseconds. */
  readonly finishedAt: number;
}

export interface FinishedValue {
  readonly key: string;
  /** The job's payload as stored (untrusted). */
  readonly data: unknown;
  /** What the job returned (its packed result records, for a worker of ours); undefined when it cannot be read. */
  readonly value: unknown;
}

/**
 * What the coordinator needs from a queue. Jobs are named by (sweep hash,
 * job key); how a backend lays them out is its own business. Every method is
 * safe against workers taking and finishing jobs at the same time.
 */
export interface WorkQueue {
  /** Queue the entries that are not in the queue yet. */
  add(
    sweep: { readonly hash: string; readonly name: string },
    entries: readonly QueueEntry[],
    options: AddOptions,
  ): Promise<AddResult>;
  counts(sweepHash: string): Promise<SweepQueueCounts>;
  /** The sweep's finished jobs with their finish times, a page at a time. */
  finishedJobs(sweepHash: string): AsyncGenerator<FinishedJob[]>;
  /** Return values of these finished jobs; jobs no longer there are left out. */
  finishedValues(sweepHash: string, keys: readonly string[]): Promise<FinishedValue[]>;
  /** Remove these jobs if they are finished (never a waiting or running one); how many went. */
  removeFinished(sweepHash: string, keys: readonly string[]): Promise<number>;
  /**
   * Remove the sweep's jobs that have not started (waiting, or delayed for a
   * retry), checking each one's state at the moment it goes: a job that
   * started or finished meanwhile stays. Returns how many trials their jobs carried.
   */
  cancel(sweepHash: string): Promise<number>;
  /**
   * Trials per job for this sweep, agreed once per sweep in the queue so that
   * every submit and requeue cuts the sweep into the same blocks (a block is
   * one job id): the size already agreed if there is one and `force` is
   * false, else `proposed`, which is then the agreed size.
   */
  batchSize(sweepHash: string, proposed: number, force: boolean): Promise<number>;
  /** The agreed trials per job for this sweep, or undefined when none is agreed yet. */
  agreedBatchSize(sweepHash: string): Promise<number | undefined>;
  close(): Promise<void>;
}
