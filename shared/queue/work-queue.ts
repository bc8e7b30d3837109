import type { JobPayload } from '../schemas/records.js';

/** One job to queue: its key within the sweep and what a worker receives. */
export interface QueueEntry {
  readonly key: string;
  readonly payload: JobPayload;
}

export interface AddOptions {
  /** Also take jobs out of the failed set and queue them afresh (a new set of attempts). */
  readonly retryFailed: boolean;
}

/** What one add() call really did; exact even when several callers add the same jobs at once. */
export interface AddResult {
  /** Entries this call put in the queue. */
  readonly added: number;
  /** Entries already there (waiting, running, delayed, or finished and not gathered): left alone. */
  readonly present: number;
  /** Entries in the failed set, left there. */
  readonly failedKept: number;
  /** Entries taken out of the failed set and queued afresh by this call (retryFailed). */
  readonly retried: number;
}

/** A sweep's jobs in the queue by state (a snapshot). */
export interface SweepQueueCounts {
  readonly waiting: number;
  readonly active: number;
  /** Waiting out a retry backoff. */
  readonly delayed: number;
  readonly failed: number;
}

export interface FinishedJob {
  readonly key: string;
  /** Epoch milliseconds. */
  readonly finishedAt: number;
}

export interface FinishedValue {
  readonly key: string;
  /** What the job returned (its result record, for a worker of ours); undefined when it cannot be read. */
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
   * started or finished meanwhile stays. Returns how many were removed.
   */
  cancel(sweepHash: string): Promise<number>;
  close(): Promise<void>;
}
