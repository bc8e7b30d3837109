import type { Logger } from '../shared/logger.js';
import type { WorkQueue } from '../shared/queue/work-queue.js';
import { readBatchMemory, writeBatchMemory } from '../shared/store/batch-memory.js';
import { ResultStore } from '../shared/store/result-store.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { agreeBatchSize, type EnqueueReport, enqueueMissing } from './enqueue-missing.js';
import { plannedNow } from './planned-jobs.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface RequeueResult extends EnqueueReport {
  readonly name: string;
  readonly hash: string;
  readonly dir: string;
}

/** `requeue DIR`: the sweep of the folder, requeued in the queue the settings name. */
export async function requeueSweep(
  dir: string,
  settings: QueueSettings,
  retryFailed: boolean,
  logger: Logger | undefined,
): Promise<RequeueResult> {
  const store = ResultStore.open(dir);
  const sweep = await store.readSweep();
  return withQueue(settings, logger, (queue) => requeueIn(queue, store, sweep, retryFailed, logger));
}

/**
 * The resume command: the result files say what is done, every other trial
 * whose block has no job in the queue goes back in (for an adaptive sweep: of
 * the design the results so far call for; counts are in trials). Works the same after a crash,
 * after `cancel`, or after Redis lost all its data.
 */
export async function requeueIn(
  queue: WorkQueue,
  store: ResultStore,
  sweep: LoadedSweep,
  retryFailed: boolean,
  logger: Logger | undefined,
): Promise<RequeueResult> {
  // Records set aside by the store (damaged lines, keys that are not their content's) are said once per file.
  const done = await store.completedKeys({
    onWarning: (w) => logger?.warn({ file: w.file, line: w.line, kind: w.kind }, w.message),
  });
  const planned = await plannedNow(store, sweep);
  // The size agreed when the sweep was submitted, so the same blocks make the same jobs,
  // from the sweep's folder when Redis lost it.
  const batchSize = await agreeBatchSize(queue, sweep, { remembered: await readBatchMemory(store.dir, sweep.hash) });
  await writeBatchMemory(store.dir, sweep.hash, batchSize);
  const report = await enqueueMissing(queue, sweep, done, {
    retryFailed,
    batchSize,
    ...(planned.jobs === undefined ? {} : { jobs: planned.jobs }),
  });
  logger?.info({ sweep: sweep.spec.name, enqueued: report.enqueued, retried: report.retried }, 'sweep requeued');
  return { ...report, name: sweep.spec.name, hash: sweep.hash, dir: store.dir };
}
