import type { JobsOptions } from 'bullmq';
import { jobIdFor } from '../shared/queue-names.js';
import { type PlannedJob, toPayload } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';

/** Tries per job: the first run plus three retries for transient faults (crashes, exceptions). */
export const JOB_ATTEMPTS = 4;
/** First retry after 5 s, then 10 s, 20 s: long enough for a restarted machine or Redis. */
export const RETRY_BASE_DELAY_MS = 5_000;
/** Failed jobs kept in Redis for `requeue --failed` and for reading `failedReason`; older ones drop off. */
export const KEEP_FAILED_JOBS = 10_000;
/**
 * Completed jobs stay until `gather` copies their records to disk and removes
 * them; after 30 days they go anyway so Redis memory stays bounded even if
 * nobody gathers (the records are still in the worker's own shard files).
 */
export const KEEP_COMPLETED_SECONDS = 30 * 24 * 3600;

export function jobOptions(jobId: string): JobsOptions {
  return {
    jobId,
    attempts: JOB_ATTEMPTS,
    backoff: { type: 'exponential', delay: RETRY_BASE_DELAY_MS },
    removeOnComplete: { age: KEEP_COMPLETED_SECONDS },
    removeOnFail: { count: KEEP_FAILED_JOBS },
  };
}

/** One addBulk entry for a planned job. */
export interface BulkEntry {
  readonly name: string;
  readonly data: unknown;
  readonly opts: JobsOptions;
}

export function bulkEntry(sweep: LoadedSweep, job: PlannedJob): BulkEntry {
  return { name: sweep.spec.name, data: toPayload(sweep, job), opts: jobOptions(jobIdFor(sweep.hash, job.key)) };
}
