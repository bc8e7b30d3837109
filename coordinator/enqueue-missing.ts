import type { Queue } from 'bullmq';
import type { ChainableCommander, Redis } from 'ioredis';
import { jobIdFor, jobRedisKey, type QueueTarget, stateRedisKey } from '../shared/queue-names.js';
import { expandJobs, type PlannedJob } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { type BulkEntry, bulkEntry } from './job-options.js';

export interface EnqueueOptions {
  /** Jobs per addBulk call: one round trip each, and a kill loses at most one chunk of progress. */
  readonly chunkSize?: number;
  /** Also put jobs that sit in BullMQ's failed set back in the queue (fresh attempts). */
  readonly retryFailed?: boolean;
}

export interface EnqueueReport {
  /** Jobs the sweep defines. */
  planned: number;
  /** Jobs with a result on disk: never enqueued again. */
  done: number;
  /** Jobs already in Redis (waiting, running, delayed, or completed but not yet gathered). */
  inQueue: number;
  /** Jobs in BullMQ's failed set, left there (see `requeue --failed`). */
  failedKept: number;
  /** Failed jobs removed and enqueued afresh (with retryFailed). */
  retried: number;
  /** Jobs added by this call. */
  enqueued: number;
}

export const DEFAULT_CHUNK = 1_000;
const IN_FLIGHT = 2;

/** Results of a pipeline, with the first command error thrown. */
async function replies(pipeline: ChainableCommander): Promise<unknown[]> {
  const results = (await pipeline.exec()) ?? [];
  return results.map(([error, value]) => {
    if (error !== null) throw error;
    return value;
  });
}

/**
 * Enqueue every planned job that has no result and is not in Redis yet.
 * Whether a job exists is checked per chunk (one pipelined EXISTS each), so
 * the counts say what this call really added; BullMQ ignores an existing job
 * id anyway, so a race with another submit cannot duplicate a job.
 */
export async function enqueueMissing(
  client: Redis,
  queue: Queue,
  target: QueueTarget,
  sweep: LoadedSweep,
  done: ReadonlySet<string>,
  options: EnqueueOptions = {},
): Promise<EnqueueReport> {
  const chunkSize = options.chunkSize ?? DEFAULT_CHUNK;
  const report: EnqueueReport = { planned: 0, done: 0, inQueue: 0, failedKept: 0, retried: 0, enqueued: 0 };
  const failedKey = stateRedisKey(target, 'failed');

  const flush = async (jobs: readonly PlannedJob[]): Promise<void> => {
    const ids = jobs.map((job) => jobIdFor(sweep.hash, job.key));
    const exists = await replies(client.pipeline(ids.map((id) => ['exists', jobRedisKey(target, id)])));
    // Only jobs already in Redis can be in the failed set: ask about those alone.
    const present = ids.filter((_, i) => exists[i] !== 0);
    const scores =
      present.length === 0 ? [] : await replies(client.pipeline(present.map((id) => ['zscore', failedKey, id])));
    const failed = new Set(present.filter((_, i) => scores[i] !== null));
    const toAdd: BulkEntry[] = [];
    const toRetry: PlannedJob[] = [];
    for (const [i, job] of jobs.entries()) {
      const id = ids[i] as string;
      if (exists[i] === 0) {
        toAdd.push(bulkEntry(sweep, job));
      } else if (failed.has(id) && options.retryFailed === true) {
        toRetry.push(job);
      } else if (failed.has(id)) {
        report.failedKept++;
      } else {
        report.inQueue++;
      }
    }
    report.enqueued += toAdd.length;
    // A failed job keeps its id: it has to go before a fresh copy can be added (0 = someone else moved it).
    const removed = await Promise.all(toRetry.map((job) => queue.remove(jobIdFor(sweep.hash, job.key))));
    toRetry.forEach((job, i) => {
      if (removed[i] === 1) {
        toAdd.push(bulkEntry(sweep, job));
        report.retried++;
      } else {
        report.inQueue++;
      }
    });
    if (toAdd.length > 0) await queue.addBulk(toAdd.map((e) => ({ name: e.name, data: e.data, opts: e.opts })));
  };

  // Two chunks in flight: the next one is built and checked while Redis stores the last one.
  const inFlight = new Set<Promise<void>>();
  let failure: unknown;
  const launch = async (jobs: PlannedJob[]): Promise<void> => {
    while (inFlight.size >= IN_FLIGHT) await Promise.race(inFlight);
    if (failure !== undefined) throw failure;
    const task = flush(jobs).catch((error: unknown) => {
      failure ??= error;
    });
    const tracked = task.finally(() => inFlight.delete(tracked));
    inFlight.add(tracked);
  };
  let chunk: PlannedJob[] = [];
  for (const job of expandJobs(sweep)) {
    report.planned++;
    if (done.has(job.key)) {
      report.done++;
      continue;
    }
    chunk.push(job);
    if (chunk.length >= chunkSize) {
      await launch(chunk);
      chunk = [];
    }
  }
  if (chunk.length > 0) await launch(chunk);
  await Promise.all(inFlight);
  if (failure !== undefined) throw failure;
  return report;
}
