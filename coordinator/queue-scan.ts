import type { Queue } from 'bullmq';
import type { Redis } from 'ioredis';
import { jobIdPrefix, type QueueTarget, stateRedisKey } from '../shared/queue-names.js';

/** BullMQ's states, grouped the way people ask about them. */
export const WAITING_STATES = ['wait', 'paused', 'prioritized', 'waiting-children'] as const;
export type ScanState = (typeof WAITING_STATES)[number] | 'active' | 'delayed' | 'failed' | 'completed';

/** States kept in Redis lists; the rest are sorted sets. */
const LIST_STATES: ReadonlySet<string> = new Set(['wait', 'paused', 'active']);

export const SCAN_PAGE = 1_000;

/**
 * Every job id of one sweep in one state, read page by page so a queue of
 * millions never comes back in one reply. A set that changes while it is
 * read may show an id twice or miss one that moved; callers that act on ids
 * (gather, cancel) re-check each one, and counts are a snapshot.
 */
export async function* sweepIdsIn(
  client: Redis,
  target: QueueTarget,
  sweepHash: string,
  state: ScanState,
): AsyncGenerator<string[]> {
  const prefix = jobIdPrefix(sweepHash);
  const key = stateRedisKey(target, state);
  for (let start = 0; ; start += SCAN_PAGE) {
    const stop = start + SCAN_PAGE - 1;
    const page = LIST_STATES.has(state)
      ? await client.lrange(key, start, stop)
      : await client.zrange(key, start, String(stop));
    const ours = page.filter((id) => id.startsWith(prefix));
    if (ours.length > 0) yield ours;
    if (page.length < SCAN_PAGE) return;
  }
}

/** Distinct ids of the sweep over several states. */
export async function collectSweepIds(
  client: Redis,
  target: QueueTarget,
  sweepHash: string,
  states: readonly ScanState[],
): Promise<Set<string>> {
  const ids = new Set<string>();
  for (const state of states) {
    for await (const page of sweepIdsIn(client, target, sweepHash, state)) for (const id of page) ids.add(id);
  }
  return ids;
}

export interface QueueCounts {
  readonly waiting: number;
  readonly active: number;
  readonly delayed: number;
  readonly failed: number;
}

/**
 * How many of this sweep's jobs wait, run, wait out a retry backoff or sit in
 * the failed set (a snapshot). Completed jobs are not counted here: progress
 * reads them with their finish times in the same pass.
 */
export async function sweepQueueCounts(client: Redis, target: QueueTarget, sweepHash: string): Promise<QueueCounts> {
  const count = async (states: readonly ScanState[]): Promise<number> =>
    (await collectSweepIds(client, target, sweepHash, states)).size;
  return {
    waiting: await count(WAITING_STATES),
    active: await count(['active']),
    delayed: await count(['delayed']),
    failed: await count(['failed']),
  };
}

/** Remove jobs by id, a few hundred requests in flight at a time; returns how many were removed. */
export async function removeJobs(queue: Queue, ids: readonly string[]): Promise<number> {
  let removed = 0;
  for (let i = 0; i < ids.length; i += 500) {
    const results = await Promise.all(ids.slice(i, i + 500).map((id) => queue.remove(id)));
    removed += results.filter((r) => r === 1).length;
  }
  return removed;
}
