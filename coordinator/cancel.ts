import type { Logger } from '../shared/logger.js';
import { ResultStore } from '../shared/store/result-store.js';
import { collectSweepIds, removeJobs, WAITING_STATES } from './queue-scan.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface CancelResult {
  readonly name: string;
  /** Waiting and delayed jobs taken out of the queue. */
  readonly removed: number;
  /** Jobs running now: they finish and their records are kept. */
  readonly active: number;
}

/** Take a sweep's not-yet-started jobs out of the queue; `requeue` puts them back. */
export async function cancelSweep(
  dir: string,
  settings: QueueSettings,
  logger: Logger | undefined,
): Promise<CancelResult> {
  const store = ResultStore.open(dir);
  const sweep = await store.readSweep();
  return withQueue(settings, logger, async ({ client, queue }) => {
    const ids = await collectSweepIds(client, settings.queue, sweep.hash, [...WAITING_STATES, 'delayed']);
    const removed = await removeJobs(queue, [...ids]);
    const active = (await collectSweepIds(client, settings.queue, sweep.hash, ['active'])).size;
    logger?.info({ sweep: sweep.spec.name, removed, active }, 'sweep cancelled');
    return { name: sweep.spec.name, removed, active };
  });
}
