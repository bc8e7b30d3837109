import type { Logger } from '../shared/logger.js';
import type { WorkQueue } from '../shared/queue/work-queue.js';
import { ResultStore } from '../shared/store/result-store.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface CancelResult {
  readonly name: string;
  /** Waiting and delayed jobs taken out of the queue. */
  readonly removed: number;
  /** Jobs running now: they finish and their records are kept. */
  readonly active: number;
}

/** `cancel DIR`: the sweep of the folder, cancelled in the queue the settings name. */
export async function cancelSweep(
  dir: string,
  settings: QueueSettings,
  logger: Logger | undefined,
): Promise<CancelResult> {
  const sweep = await ResultStore.open(dir).readSweep();
  return withQueue(settings, logger, (queue) => cancelIn(queue, sweep, logger));
}

/** Take a sweep's not-yet-started jobs out of the queue; `requeue` puts them back. */
export async function cancelIn(
  queue: WorkQueue,
  sweep: LoadedSweep,
  logger: Logger | undefined,
): Promise<CancelResult> {
  const removed = await queue.cancel(sweep.hash);
  const { active } = await queue.counts(sweep.hash);
  logger?.info({ sweep: sweep.spec.name, removed, active }, 'sweep cancelled');
  return { name: sweep.spec.name, removed, active };
}
