import type { QueueEntry, WorkQueue } from '../shared/queue/work-queue.js';
import { expandJobs, type PlannedJob, toPayload } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';

export interface EnqueueOptions {
  /** Jobs per add call: one round trip each, and a kill loses at most one chunk of progress. */
  readonly chunkSize?: number;
  /** Also put jobs that sit in the failed set back in the queue (fresh attempts). */
  readonly retryFailed?: boolean;
  /** The jobs to consider instead of every job of the sweep (an adaptive sweep's current design). */
  readonly jobs?: Iterable<PlannedJob>;
}

export interface EnqueueReport {
  /** Jobs the sweep defines. */
  planned: number;
  /** Jobs with a result on disk: never enqueued again. */
  done: number;
  /** Jobs already in the queue (waiting, running, delayed, or completed but not yet gathered). */
  inQueue: number;
  /** Jobs in the failed set, left there (see `requeue --failed`). */
  failedKept: number;
  /** Failed jobs removed and enqueued afresh (with retryFailed). */
  retried: number;
  /** Jobs added by this call. */
  enqueued: number;
}

export const DEFAULT_CHUNK = 1_000;
/** Chunks in flight: the next one is built while the queue stores the last one. */
const IN_FLIGHT = 2;

/**
 * Enqueue every planned job that has no result and is not in the queue yet.
 * The queue says per chunk what it really added, so the report is exact even
 * when another submit of the same sweep runs at the same time.
 */
export async function enqueueMissing(
  queue: WorkQueue,
  sweep: LoadedSweep,
  done: ReadonlySet<string>,
  options: EnqueueOptions = {},
): Promise<EnqueueReport> {
  const chunkSize = options.chunkSize ?? DEFAULT_CHUNK;
  const retryFailed = options.retryFailed === true;
  const report: EnqueueReport = { planned: 0, done: 0, inQueue: 0, failedKept: 0, retried: 0, enqueued: 0 };
  const target = { hash: sweep.hash, name: sweep.spec.name };

  const flush = async (entries: readonly QueueEntry[]): Promise<void> => {
    const result = await queue.add(target, entries, { retryFailed });
    report.enqueued += result.added;
    report.inQueue += result.present;
    report.failedKept += result.failedKept;
    report.retried += result.retried;
  };

  const inFlight = new Set<Promise<void>>();
  let failure: unknown;
  const launch = async (entries: QueueEntry[]): Promise<void> => {
    while (inFlight.size >= IN_FLIGHT) await Promise.race(inFlight);
    if (failure !== undefined) throw failure;
    const task = flush(entries).catch((error: unknown) => {
      failure ??= error;
    });
    const tracked = task.finally(() => inFlight.delete(tracked));
    inFlight.add(tracked);
  };
  let chunk: QueueEntry[] = [];
  for (const job of options.jobs ?? expandJobs(sweep)) {
    report.planned++;
    if (done.has(job.key)) {
      report.done++;
      continue;
    }
    chunk.push({ key: job.key, payload: toPayload(sweep, job) });
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
