import type { Logger } from '../logger.js';

/**
 * Lock and stall timing. A killed worker's job is found again after its lock
 * expires (at most `lockMs` after the last renewal, renewals every lockMs/2)
 * plus one stall check: with these defaults within about 15 s.
 */
export const DEFAULT_LOCK_MS = 10_000;
export const DEFAULT_STALL_CHECK_MS = 5_000;
/** Stalls (lost locks) a job may survive before it is failed; a second crash is tolerated. */
export const DEFAULT_MAX_STALLED = 2;

/** A job handed to a worker. */
export interface ConsumedJob {
  readonly id: string;
  /** The payload as stored: untrusted. */
  readonly data: unknown;
  /** Why the payload could not be read (not JSON, too large), or undefined when `data` holds it. */
  readonly unreadable: string | undefined;
  /** 1 for the first try. */
  readonly attempt: number;
}

/** What became of a job; the consumer tells the queue. */
export type JobVerdict =
  | {
      readonly kind: 'done';
      readonly value: unknown;
      /**
       * The records are durable where the coordinator reads them (a shared
       * disk): the job leaves the queue as it completes instead of waiting
       * for `gather`.
       */
      readonly leave?: boolean;
    }
  | { readonly kind: 'failed'; readonly reason: string; readonly retry: boolean }
  /** Not run here (the worker cannot run anything now): back to waiting without using an attempt. */
  | { readonly kind: 'handed-back'; readonly reason: string };

export type JobHandler = (job: ConsumedJob) => Promise<JobVerdict>;

export interface ConsumerOptions {
  /** Jobs held at once. */
  readonly concurrency: number;
  /** How long a job's lock lasts without renewal; renewed every half of it. */
  readonly lockMs: number;
  /** How often to look for jobs whose worker died. */
  readonly stallCheckMs: number;
  /** Times a job may lose its worker before it is failed. */
  readonly maxStalledCount: number;
  readonly logger: Logger;
}

export interface ConsumerCounts {
  completed: number;
  failed: number;
}

/** Takes jobs from a queue and runs them through a handler, with locks that survive long jobs. */
export interface WorkConsumer {
  readonly counts: ConsumerCounts;
  /** Jobs held at once; may change while running. */
  concurrency: number;
  /** Start taking jobs; resolves once connected. */
  start(): Promise<void>;
  /** Stop taking jobs, let the running ones finish and be acknowledged, then disconnect. */
  close(): Promise<void>;
}
