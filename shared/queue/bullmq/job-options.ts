import type { JobsOptions } from 'bullmq';
import { JOB_ATTEMPTS, KEEP_COMPLETED_SECONDS, KEEP_FAILED_JOBS, RETRY_BASE_DELAY_MS } from '../job-policy.js';

/** BullMQ options of every job we add: id, retries with backoff, how long finished jobs stay. */
export function jobOptions(jobId: string): JobsOptions {
  return {
    jobId,
    attempts: JOB_ATTEMPTS,
    backoff: { type: 'exponential', delay: RETRY_BASE_DELAY_MS },
    removeOnComplete: { age: KEEP_COMPLETED_SECONDS },
    removeOnFail: { count: KEEP_FAILED_JOBS },
  };
}
