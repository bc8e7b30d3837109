import type { Logger } from '../shared/logger.js';
import { ResultStore } from '../shared/store/result-store.js';
import { type EnqueueReport, enqueueMissing } from './enqueue-missing.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface RequeueResult extends EnqueueReport {
  readonly name: string;
  readonly hash: string;
  readonly dir: string;
}

/**
 * The resume command: the result files say what is done, everything else
 * that Redis does not hold goes back in the queue. Works the same after a
 * crash, after `cancel`, or after Redis lost all its data.
 */
export async function requeueSweep(
  dir: string,
  settings: QueueSettings,
  retryFailed: boolean,
  logger: Logger | undefined,
): Promise<RequeueResult> {
  const store = ResultStore.open(dir);
  const sweep = await store.readSweep();
  return withQueue(settings, logger, async ({ client, queue }) => {
    const done = await store.completedKeys();
    const report = await enqueueMissing(client, queue, settings.queue, sweep, done, { retryFailed });
    logger?.info({ sweep: sweep.spec.name, enqueued: report.enqueued, retried: report.retried }, 'sweep requeued');
    return { ...report, name: sweep.spec.name, hash: sweep.hash, dir: store.dir };
  });
}
