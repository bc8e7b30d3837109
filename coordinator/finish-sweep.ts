import { hostname } from 'node:os';
import { setTimeout as sleep } from 'node:timers/promises';
import { isErrorOf, ServiceError } from '../shared/errors.js';
import type { Logger } from '../shared/logger.js';
import type { WorkQueue } from '../shared/queue/work-queue.js';
import { newWriterId, type ResultStore } from '../shared/store/result-store.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { type MissingJobs, missingJobs } from './finish-missing.js';
import { gatherFrom } from './gather.js';
import { plannedNow } from './planned-jobs.js';
import { type ProgressSnapshot, sweepProgress } from './queue-progress.js';
import { requeueIn } from './requeue.js';

/** A slow look stretches the pause up to this. */
const MAX_STRETCHED_PAUSE_MS = 60_000;

/** How a follow-to-the-end ended. */
export type FinishEnd =
  /** Every planned job has a record in the sweep folder. */
  | 'complete'
  /** Nothing is waiting or running any more, and some jobs failed permanently (or returned no usable record). */
  | 'stuck'
  /** The time given with `until` came first. */
  | 'deadline'
  /** Stopped on request (a signal). */
  | 'stopped'
  /** Redis stayed unreachable longer than the patience allows. */
  | 'unreachable';

export type FinishEvent =
  | { readonly kind: 'progress'; readonly snapshot: ProgressSnapshot }
  /** Records copied from Redis into the folder (copied), and finished jobs freed in Redis (removed). */
  | { readonly kind: 'gathered'; readonly copied: number; readonly removed: number }
  /**
   * Jobs put (back) in the queue: `queued` were in neither the results nor
   * the queue (lost from Redis, or never queued), `retried` came out of the
   * failed set (retryFailed, first look only).
   */
  | { readonly kind: 'queued'; readonly queued: number; readonly retried: number; readonly first: boolean }
  | { readonly kind: 'redis-trouble'; readonly message: string }
  | { readonly kind: 'redis-back' };

export interface FinishOptions {
  readonly store: ResultStore;
  readonly sweep: LoadedSweep;
  /** Opens the queue; called again after Redis trouble. The first call's error ends the follow. */
  readonly openQueue: () => Promise<WorkQueue>;
  /** Give jobs in the failed set a fresh set of attempts, once, at the start. */
  readonly retryFailed: boolean;
  /** Shortest pause between two looks (a look that took long stretches it). */
  readonly intervalMs: number;
  /** Epoch milliseconds at which to stop following, unfinished. */
  readonly deadline?: number;
  /** How long Redis may stay unreachable before giving up. */
  readonly redisPatienceMs: number;
  readonly signal?: AbortSignal;
  readonly onEvent?: (event: FinishEvent) => void;
  readonly logger?: Logger;
  /** The clock, for tests; Date.now by default. */
  readonly now?: () => number;
  /** The pause between looks, for tests; a timer that the signal cuts short by default. */
  readonly pause?: (ms: number, signal: AbortSignal | undefined) => Promise<void>;
}

export interface FinishResult {
  readonly end: FinishEnd;
  /** The last snapshot taken (null if the queue never answered after the start). */
  readonly snapshot: ProgressSnapshot | null;
  readonly missing: MissingJobs;
  /** Records this follow copied from Redis into the folder. */
  readonly gathered: number;
  /** Jobs this follow queued because they were nowhere (lost from Redis). */
  readonly queued: number;
  /** Failed jobs given fresh attempts at the start. */
  readonly retried: number;
  /** Return values left in Redis because they are no record of this sweep (last look). */
  readonly rejected: number;
  /** The last Redis trouble, for `unreachable`. */
  readonly redisMessage: string | null;
}

/**
 * Follow a queued sweep until every planned job has a record in its folder.
 * Each look gathers finished jobs from Redis into the folder (so Redis holds
 * only what is still to do), takes a progress snapshot, and, when some
 * planned job is in neither the results nor the queue (Redis flushed or
 * restarted without persistence, a job dropped), or when nothing moves any
 * more, runs the resume logic (`requeueIn`), which queues exactly the jobs
 * that are nowhere. It ends when every job is recorded, when only jobs that
 * failed permanently are left, at the deadline, on the signal, or when Redis
 * stays away. Every step is safe to interrupt: gather frees a job in Redis
 * only after its record is durable, and queueing only adds what is absent.
 */
export async function finishSweep(options: FinishOptions): Promise<FinishResult> {
  const { store, sweep, logger } = options;
  const now = options.now ?? Date.now;
  const emit = (event: FinishEvent): void => options.onEvent?.(event);
  let gathered = 0;
  let queued = 0;
  let retried = 0;
  let rejected = 0;
  let snapshot: ProgressSnapshot | null = null;
  let redisMessage: string | null = null;
  let troubleSince: number | null = null;
  let first = true;
  // One shard for every record this follow gathers, not one per look.
  const gatherWriter = newWriterId(`gather-${hostname()}`);

  // A function, not a property read: the signal changes while this runs.
  const stopRequested = (): boolean => options.signal?.aborted === true;
  const result = async (end: FinishEnd): Promise<FinishResult> => {
    // Without a queue snapshot (Redis gone), the files still say what is recorded.
    const last =
      snapshot === null || end === 'unreachable'
        ? await sweepProgress(store, sweep, undefined, (await plannedNow(store, sweep)).count)
        : snapshot;
    return { end, snapshot, missing: missingJobs(last), gathered, queued, retried, rejected, redisMessage };
  };

  // The first open fails loudly (a wrong URL, a wrong password): nothing to wait for.
  let queue: WorkQueue | null = await options.openQueue();
  try {
    for (;;) {
      if (stopRequested()) return await result('stopped');
      const started = now();
      try {
        queue ??= await options.openQueue();
        const look = await lookOnce(queue);
        if (troubleSince !== null) {
          troubleSince = null;
          emit({ kind: 'redis-back' });
        }
        if (look !== null) return await result(look);
      } catch (error) {
        if (!isErrorOf(error, ServiceError)) throw error;
        redisMessage = error.message;
        troubleSince ??= started;
        emit({ kind: 'redis-trouble', message: error.message });
        logger?.warn({ reason: error.message }, 'Redis trouble while following the sweep');
        const broken = queue;
        queue = null;
        await broken?.close().catch(() => undefined);
        if (now() - troubleSince >= options.redisPatienceMs) return await result('unreachable');
      }
      if (stopRequested()) return await result('stopped');
      // The deadline is checked after a look, so a sweep that finished just before it ends as finished.
      if (options.deadline !== undefined && now() >= options.deadline) return await result('deadline');
      // A look over a big sweep reads every record: keep looking from taking more than a third of the time.
      let pause = Math.max(options.intervalMs, Math.min(2 * (now() - started), MAX_STRETCHED_PAUSE_MS));
      if (options.deadline !== undefined) pause = Math.max(0, Math.min(pause, options.deadline - now()));
      await (options.pause ?? pauseFor)(pause, options.signal);
    }
  } finally {
    await queue?.close().catch(() => undefined);
  }

  /** One look: gather, measure, requeue what is nowhere; an end, or null to look again. */
  async function lookOnce(q: WorkQueue): Promise<FinishEnd | null> {
    const g = await gatherFrom(q, store, sweep, logger, gatherWriter);
    gathered += g.copied;
    rejected = g.rejected;
    if (g.copied > 0 || g.removed > 0) emit({ kind: 'gathered', copied: g.copied, removed: g.removed });
    // A plain sweep plans every job; an adaptive one the trials its results so far call for.
    const plan = await plannedNow(store, sweep);
    let s = await sweepProgress(store, sweep, q, plan.count);
    snapshot = s;
    if (plan.final && s.onDisk >= s.planned) {
      emit({ kind: 'progress', snapshot: s });
      return 'complete';
    }
    const side = s.queue;
    if (side === null) throw new Error('a progress snapshot taken with a queue has queue counts');
    const moving = side.waiting + side.active + side.delayed;
    // Counts are a snapshot of a moving queue; a false alarm costs one resume pass that adds nothing.
    const unaccounted = s.planned - s.finished - moving - side.failed;
    if (first || unaccounted > 0 || moving === 0) {
      const r = await requeueIn(q, store, sweep, first && options.retryFailed, logger);
      queued += r.enqueued;
      retried += r.retried;
      if (r.enqueued > 0 || r.retried > 0 || first) {
        emit({ kind: 'queued', queued: r.enqueued, retried: r.retried, first });
      }
      const wasFirst = first;
      first = false;
      if (r.enqueued > 0 || r.retried > 0 || wasFirst) {
        s = await sweepProgress(store, sweep, q, r.planned);
        snapshot = s;
      } else if (moving === 0 && side.finishedNotGathered <= g.rejected) {
        // Nothing runs, nothing was lost, nothing finished since the gather: only failed jobs
        // (and values that are no record of this sweep) are left. Waiting longer cannot help.
        emit({ kind: 'progress', snapshot: s });
        return 'stuck';
      }
    }
    emit({ kind: 'progress', snapshot: s });
    return null;
  }
}

/** Wait, or return early when the signal fires. */
async function pauseFor(ms: number, signal: AbortSignal | undefined): Promise<void> {
  try {
    await sleep(ms, undefined, signal === undefined ? {} : { signal });
  } catch (error) {
    if ((error as { name?: string } | null)?.name !== 'AbortError') throw error;
  }
}
