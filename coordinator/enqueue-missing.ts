import { packBatch } from '../shared/queue/batch-payload.js';
import { batchSizeFor } from '../shared/queue/batch-size.js';
import type { QueueEntry, WorkQueue } from '../shared/queue/work-queue.js';
import { expandJobs, type PlannedJob, toPayload } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { planSweep } from './plan-sweep.js';

export interface EnqueueOptions {
  /** Trials per add call (whole queue jobs): one round trip each, and a kill loses at most one chunk of progress. */
  readonly chunkSize?: number;
  /**
   * Trials per queue job (default 1). The sweep, in its planned order, is cut
   * into blocks of this many trials; a block's job carries those of its
   * trials without a result and is named by the block's first key, so every
   * caller with the same size makes the same jobs (see WorkQueue.batchSize).
   */
  readonly batchSize?: number;
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

/** One queue job for the trials of a block that still need a result. */
function entryFor(sweep: LoadedSweep, blockKey: string, missing: readonly PlannedJob[], batchSize: number): QueueEntry {
  const first = missing[0] as PlannedJob;
  // One-trial jobs keep the plain payload of a single job.
  if (batchSize === 1) return { key: blockKey, trials: 1, payload: toPayload(sweep, first) };
  return {
    key: blockKey,
    trials: missing.length,
    payload: packBatch(
      {
        name: sweep.spec.name,
        hash: sweep.hash,
        rootSeed: sweep.spec.seed,
        ...(sweep.spec.jobTimeoutMs === undefined ? {} : { timeoutMs: sweep.spec.jobTimeoutMs }),
      },
      { id: sweep.model.id, version: sweep.model.version },
      missing,
    ),
  };
}

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
  const batchSize = options.batchSize ?? 1;
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
  let chunkTrials = 0;
  let blockKey = '';
  let inBlock = 0;
  let missing: PlannedJob[] = [];
  const endBlock = async (): Promise<void> => {
    if (missing.length > 0) {
      chunk.push(entryFor(sweep, blockKey, missing, batchSize));
      chunkTrials += missing.length;
      missing = [];
    }
    inBlock = 0;
    if (chunkTrials >= chunkSize) {
      await launch(chunk);
      chunk = [];
      chunkTrials = 0;
    }
  };
  for (const job of options.jobs ?? expandJobs(sweep)) {
    report.planned++;
    // Blocks are cut from the whole sweep, done trials included, so they never shift.
    if (inBlock === 0) blockKey = job.key;
    inBlock++;
    if (done.has(job.key)) report.done++;
    else missing.push(job);
    if (inBlock >= batchSize) await endBlock();
  }
  await endBlock();
  if (chunk.length > 0) await launch(chunk);
  await Promise.all(inFlight);
  if (failure !== undefined) throw failure;
  return report;
}

/** Trials timed to size batches (as `plan` does by default). */
const CALIBRATION_TRIALS = 3;

/** Seconds of one core per trial, averaged over the sweep as `plan` estimates it; null when unknown. */
export async function calibratedSecondsPerTrial(sweep: LoadedSweep): Promise<number | null> {
  const plan = await planSweep(sweep, { calibrate: CALIBRATION_TRIALS, sampleSize: 0 });
  if (plan.coreHours === null || plan.jobs === 0) return null;
  return (plan.coreHours * 3600) / plan.jobs;
}

/**
 * Trials per queue job for this sweep: an explicit size (`submit --batch`,
 * then the sweep file's `batch`) is used and agreed in the queue; otherwise
 * the size the queue already agreed for the sweep, so that a requeue cuts the
 * same blocks as the submit did; otherwise one sized from the calibrated
 * trial cost. `secondsPerTrial` skips the calibration (tests, or a caller
 * that already timed the model).
 */
export async function agreeBatchSize(
  queue: WorkQueue,
  sweep: LoadedSweep,
  options: {
    readonly override?: number | undefined;
    readonly secondsPerTrial?: number | null;
    /** The size kept in the sweep's folder (store/batch-memory.ts): used when Redis lost its copy. */
    readonly remembered?: number | undefined;
  } = {},
): Promise<number> {
  // An adaptive sweep's design grows between rounds, which would shift its blocks: one trial a job.
  if (sweep.spec.refine !== undefined) return queue.batchSize(sweep.hash, 1, true);
  const explicit = options.override ?? sweep.spec.batch;
  if (explicit !== undefined) return queue.batchSize(sweep.hash, explicit, true);
  const agreed = await queue.agreedBatchSize(sweep.hash);
  if (agreed !== undefined) return agreed;
  if (options.remembered !== undefined) return queue.batchSize(sweep.hash, options.remembered, false);
  const seconds =
    options.secondsPerTrial !== undefined ? options.secondsPerTrial : await calibratedSecondsPerTrial(sweep);
  return queue.batchSize(sweep.hash, batchSizeFor(seconds), false);
}
