import type { Logger } from '../shared/logger.js';
import type { WorkQueue } from '../shared/queue/work-queue.js';
import { readBatchMemory, writeBatchMemory } from '../shared/store/batch-memory.js';
import { ResultStore } from '../shared/store/result-store.js';
import { type LoadedSweep, loadSweepFile } from '../shared/sweep/load.js';
import { agreeBatchSize, type EnqueueReport, enqueueMissing } from './enqueue-missing.js';
import { plannedNow } from './planned-jobs.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface SubmitResult extends EnqueueReport {
  readonly name: string;
  readonly hash: string;
  readonly dir: string;
  /** Trials per queue job (agreed for the sweep in the queue). */
  readonly batchSize: number;
}

export interface SubmitOptions {
  /** Trials per queue job (`--batch`); wins over the sweep file's `batch` and the calibrated size. */
  readonly batch?: number | undefined;
  /** The trial cost in core-seconds, to size batches without timing the model (tests). */
  readonly secondsPerTrial?: number | null;
}

/**
 * Validate the sweep file unless given a loaded sweep (bad input -> InputError
 * before Redis or the disk is touched), reach the queue (ServiceError before
 * the disk is touched), then submit.
 */
export async function submitSweep(
  source: string | LoadedSweep,
  resultsRoot: string,
  settings: QueueSettings,
  logger: Logger | undefined,
  options: SubmitOptions = {},
): Promise<SubmitResult> {
  const sweep = typeof source === 'string' ? await loadSweepFile(source) : source;
  return withQueue(settings, logger, async (queue) => {
    const result = await submitTo(queue, sweep, resultsRoot, options);
    logger?.info(
      {
        sweep: sweep.spec.name,
        enqueued: result.enqueued,
        batch: result.batchSize,
        redis: settings.masked,
        queue: settings.queue.name,
      },
      'sweep submitted',
    );
    return result;
  });
}

/**
 * Write or check sweep.json, then enqueue every job without a result.
 * Running it again, or after it was killed half-way, only adds what is missing.
 */
export async function submitTo(
  queue: WorkQueue,
  sweep: LoadedSweep,
  resultsRoot: string,
  options: SubmitOptions = {},
): Promise<SubmitResult> {
  const store = ResultStore.at(resultsRoot, sweep.spec.name);
  await store.prepare(sweep);
  const done = await store.completedKeys();
  // An adaptive sweep queues its design so far (at first its starting grid); `finish` queues the next trials.
  const planned = await plannedNow(store, sweep);
  const batchSize = await agreeBatchSize(queue, sweep, {
    override: options.batch,
    remembered: await readBatchMemory(store.dir, sweep.hash),
    ...(options.secondsPerTrial !== undefined ? { secondsPerTrial: options.secondsPerTrial } : {}),
  });
  await writeBatchMemory(store.dir, sweep.hash, batchSize);
  const report = await enqueueMissing(queue, sweep, done, {
    batchSize,
    ...(planned.jobs === undefined ? {} : { jobs: planned.jobs }),
  });
  return { ...report, name: sweep.spec.name, hash: sweep.hash, dir: store.dir, batchSize };
}
