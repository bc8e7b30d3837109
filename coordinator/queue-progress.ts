import { unpackBatch } from '../shared/queue/batch-payload.js';
import type { SweepQueueCounts, WorkQueue } from '../shared/queue/work-queue.js';
import type { FailureKind } from '../shared/schemas/records.js';
import type { ResultStore, StoreWarning } from '../shared/store/result-store.js';
import { countJobs } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';

export interface QueueSide extends SweepQueueCounts {
  /** Finished jobs whose record is only in Redis so far (no shared disk; `gather` copies them). */
  readonly finishedNotGathered: number;
}

/**
 * Where a sweep stands: every job has a result (`finished`), jobs are queued
 * or running (`running`), or jobs are missing and none is queued or running
 * (`stopped`: cancelled, or Redis lost them; `requeue` resumes). Null when
 * the queue was not asked (files only).
 */
export type SweepState = 'finished' | 'running' | 'stopped';

export interface ProgressSnapshot {
  readonly name: string;
  readonly hash: string;
  readonly dir: string;
  readonly planned: number;
  /** Trials with a record on disk (every count here is in trials, whatever the queue's batch size). */
  readonly onDisk: number;
  /** Trials finished anywhere: on disk, or completed in Redis and not yet gathered. */
  readonly finished: number;
  readonly queue: QueueSide | null;
  readonly state: SweepState | null;
  /** Finished jobs per minute over the latest stretch of work (up to 10 minutes), or null if unknown or stopped. */
  readonly perMinute: number | null;
  /** Seconds until every planned job is finished at that rate, or null (unknown, or stopped). */
  readonly etaSeconds: number | null;
  /** Failed attempts recorded in failures/ shards, by kind. */
  readonly failuresByKind: Partial<Record<FailureKind, number>>;
  /** Jobs that failed at least once and still have no result. */
  readonly failingJobs: number;
  readonly warnings: number;
}

/** Rate window: recent enough to follow a change in the number of workers. */
const RATE_WINDOW_MS = 10 * 60_000;

/** Finished jobs per minute from finish times, over the last stretch of work. */
export function ratePerMinute(finishTimes: readonly number[]): number | null {
  if (finishTimes.length < 2) return null;
  // Loops, not Math.max(...xs): a sweep may have more finish times than a call has arguments.
  let last = -Infinity;
  for (const t of finishTimes) if (t > last) last = t;
  let first = Infinity;
  let count = 0;
  for (const t of finishTimes) {
    if (t < last - RATE_WINDOW_MS) continue;
    count++;
    if (t < first) first = t;
  }
  if (count < 2) return null;
  const span = last - first;
  if (span < 1_000) return null;
  // n finish times span n-1 intervals.
  return ((count - 1) / span) * 60_000;
}

/**
 * Everything `progress` shows, from the files and (when a queue is given)
 * from the queue, for this sweep's jobs only.
 */
export async function sweepProgress(
  store: ResultStore,
  sweep: LoadedSweep,
  queue?: WorkQueue,
  /** Jobs planned, when not every job of the sweep (an adaptive sweep's design so far). */
  plannedJobs?: number,
): Promise<ProgressSnapshot> {
  const planned = plannedJobs ?? countJobs(sweep);
  let warnings = 0;
  const onWarning = (_w: StoreWarning): void => {
    warnings++;
  };
  const doneKeys = new Set<string>();
  const finishTimes: number[] = [];
  for await (const record of store.records({ onWarning })) {
    if (record.sweepHash !== sweep.hash) continue;
    doneKeys.add(record.key);
    const t = Date.parse(record.finishedAt);
    if (Number.isFinite(t)) finishTimes.push(t);
  }
  const onDisk = doneKeys.size;
  const failuresByKind: Partial<Record<FailureKind, number>> = {};
  const failingKeys = new Set<string>();
  for await (const failure of store.failures({ onWarning })) {
    if (failure.sweepHash !== sweep.hash) continue;
    failuresByKind[failure.kind] = (failuresByKind[failure.kind] ?? 0) + 1;
    if (!doneKeys.has(failure.key)) failingKeys.add(failure.key);
  }

  let queueSide: QueueSide | null = null;
  if (queue !== undefined) {
    // Finished jobs carry their finish times and trial counts: rate and totals
    // without reading records. A job of one trial is not counted again when its
    // record is on disk; a batch's trials are counted once all of them are
    // (its job key is its first trial's, so that one alone says nothing).
    let finishedNotGathered = 0;
    const batches: { key: string; trials: number; finishedAt: number }[] = [];
    for await (const page of queue.finishedJobs(sweep.hash)) {
      for (const job of page) {
        if (job.trials > 1) {
          batches.push(job);
          continue;
        }
        if (doneKeys.has(job.key)) continue;
        doneKeys.add(job.key);
        finishedNotGathered++;
        finishTimes.push(job.finishedAt);
      }
    }
    // Which of a batch's trials are already on disk (a shared disk) needs its trial keys.
    for (let i = 0; i < batches.length; i += 500) {
      const page = batches.slice(i, i + 500);
      const values = await queue.finishedValues(
        sweep.hash,
        page.map((b) => b.key),
      );
      const finishedAt = new Map(page.map((b) => [b.key, b.finishedAt]));
      for (const finished of values) {
        const batch = unpackBatch(finished.data);
        if (!batch.ok) continue;
        for (const key of batch.trials.keys) {
          if (doneKeys.has(key)) continue;
          doneKeys.add(key);
          finishedNotGathered++;
          finishTimes.push(finishedAt.get(finished.key) ?? 0);
        }
      }
    }
    const counts = await queue.counts(sweep.hash);
    // A failed batch counts all its trials, also those whose record is on disk (a trial of it failed
    // for good, the others finished): count as failed at most the trials no other state explains.
    const unexplained = Math.max(0, planned - doneKeys.size - counts.waiting - counts.active - counts.delayed);
    queueSide = { ...counts, failed: Math.min(counts.failed, unexplained), finishedNotGathered };
  }
  for (const key of doneKeys) failingKeys.delete(key);
  const finished = doneKeys.size;
  const left = Math.max(0, planned - finished);
  const moving = queueSide === null ? null : queueSide.waiting + queueSide.active + queueSide.delayed > 0;
  const state: SweepState | null = left === 0 ? 'finished' : moving === null ? null : moving ? 'running' : 'stopped';
  // A stopped sweep has no rate and no time left: nothing is being done.
  const perMinute = state === 'stopped' ? null : ratePerMinute(finishTimes);
  const etaSeconds = left === 0 ? 0 : perMinute === null ? null : (left / perMinute) * 60;
  return {
    name: sweep.spec.name,
    hash: sweep.hash,
    dir: store.dir,
    planned,
    onDisk,
    finished,
    queue: queueSide,
    state,
    perMinute,
    etaSeconds,
    failuresByKind,
    failingJobs: failingKeys.size,
    warnings,
  };
}
