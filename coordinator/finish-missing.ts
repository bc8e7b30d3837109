import type { ProgressSnapshot } from './queue-progress.js';

/**
 * Why planned jobs still have no record in the sweep folder, from one
 * progress snapshot. The queue's counts are a snapshot of a moving queue, so
 * the parts are what the queue said at that moment, not a partition.
 */
export interface MissingJobs {
  /** Planned jobs without a record on disk. */
  readonly total: number;
  /** In the queue's failed set: out of attempts, or refused as invalid; only `--failed` runs them again. */
  readonly failed: number;
  readonly waiting: number;
  readonly running: number;
  /** Waiting out a retry backoff. */
  readonly delayed: number;
  /** Finished in Redis, record not copied here yet (or, at the end, a value that is no record of this sweep). */
  readonly onlyInRedis: number;
  /** Neither recorded nor in the queue: lost from Redis, or never queued; the next look queues them. */
  readonly nowhere: number;
  /** The queue could not be asked (Redis unreachable): only `total` is known. */
  readonly queueUnknown: boolean;
}

export function missingJobs(snapshot: ProgressSnapshot): MissingJobs {
  const total = Math.max(0, snapshot.planned - snapshot.onDisk);
  const q = snapshot.queue;
  if (q === null) {
    return {
      total,
      failed: 0,
      waiting: 0,
      running: 0,
      delayed: 0,
      onlyInRedis: 0,
      nowhere: 0,
      queueUnknown: true,
    };
  }
  const accounted = q.failed + q.waiting + q.active + q.delayed + q.finishedNotGathered;
  return {
    total,
    failed: q.failed,
    waiting: q.waiting,
    running: q.active,
    delayed: q.delayed,
    onlyInRedis: q.finishedNotGathered,
    nowhere: Math.max(0, total - accounted),
    queueUnknown: false,
  };
}

/** "3 failed permanently, 2 waiting": the non-zero reasons, in the order a person acts on them. */
export function describeMissing(missing: MissingJobs): string {
  if (missing.total === 0) return 'none';
  if (missing.queueUnknown) return `${missing.total} without a record (the queue could not be asked)`;
  const parts: string[] = [];
  if (missing.failed > 0) parts.push(`${missing.failed} failed permanently`);
  if (missing.onlyInRedis > 0) parts.push(`${missing.onlyInRedis} finished but only in Redis`);
  if (missing.running > 0) parts.push(`${missing.running} running`);
  if (missing.waiting > 0) parts.push(`${missing.waiting} waiting`);
  if (missing.delayed > 0) parts.push(`${missing.delayed} waiting to retry`);
  if (missing.nowhere > 0) parts.push(`${missing.nowhere} in no queue state`);
  return `${missing.total} without a record: ${parts.length === 0 ? 'in no queue state' : parts.join(', ')}`;
}
