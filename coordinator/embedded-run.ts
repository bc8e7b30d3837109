import { randomBytes } from 'node:crypto';
import { setImmediate as yieldToEventLoop } from 'node:timers/promises';
import { isErrorOf } from '../shared/errors.js';
import { newWriterId, type ResultStore } from '../shared/store/result-store.js';
import { countJobs, type PlannedJob, toPayload } from '../shared/sweep/expand.js';
import { type JobResult, JobRunner } from '../worker/job-runner.js';
import { PoolClosed, PoolTerminated } from '../worker/pool-errors.js';
import { ShardSinks } from '../worker/shard-sinks.js';
import { ThreadPool } from '../worker/thread-pool.js';
import type { PastRuns } from './past-runs.js';
import type { RunProgress, RunStart, RunSweepOptions, RunSweepResult } from './run-sweep-types.js';

/** Failure messages logged individually before the log only counts them. */
const LOGGED_FAILURES = 5;
/**
 * Shortest time between the starts of two syncs of the run's shard (ms). A
 * job counts as done only once a sync covers its record, but nothing waits on
 * one job here, and back-to-back syncs (one per three 1 ms trials, measured)
 * took CPU time from the threads: see docs/performance.md.
 */
export const EMBEDDED_SYNC_GAP_MS = 20;
/** Finished jobs skipped between two looks at signals and progress while fast-forwarding. */
const SKIP_BATCH = 5_000;

/**
 * One run of the embedded runner over a prepared sweep folder: feeds jobs
 * without a result to the job runner (as many as the pool's threads hold,
 * plus one queued per thread and those waiting for a group commit), counts a job done once its record is durable, and
 * stops on the two signals or on the first fatal error.
 */
export class EmbeddedRun {
  readonly start: RunStart;
  private readonly pool: ThreadPool;
  private readonly sinks: ShardSinks;
  private readonly runner: JobRunner;
  private readonly planned: number;
  private alreadyDone = 0;
  private succeeded = 0;
  private failed = 0;
  /** The first fatal error (a failed shard write, a broken pool): the run ends at once. */
  private fatal: unknown = null;
  private readonly inFlight = new Set<Promise<void>>();
  /** Jobs this run means to execute: exact once every job was visited. */
  private toRun: number;
  /** Wakes the feeding loop: a job ended, a record started waiting for a sync, or a signal came. */
  private wake: (() => void) | undefined;
  private readonly poke = (): void => {
    const wake = this.wake;
    this.wake = undefined;
    wake?.();
  };

  constructor(
    private readonly options: RunSweepOptions,
    private readonly store: ResultStore,
    private readonly past: PastRuns,
  ) {
    const writer = newWriterId();
    const run = randomBytes(6).toString('hex');
    this.planned = options.jobs?.count ?? countJobs(options.sweep);
    // Results already on disk all belong to this sweep (same hash), so this is
    // exact unless shards hold keys the plan no longer makes.
    this.toRun = Math.max(0, this.planned - past.done.size);
    this.sinks = new ShardSinks({
      root: options.root,
      writer,
      durability: 'each-job',
      minSyncGapMs: EMBEDDED_SYNC_GAP_MS,
      ...(options.shardFs === undefined ? {} : { fs: options.shardFs }),
    });
    this.pool = new ThreadPool({
      threads: options.threads,
      context: { writer, run },
      ...(options.threadEntry === undefined ? {} : { entry: options.threadEntry }),
    });
    this.runner = new JobRunner({ pool: this.pool, sinks: this.sinks, run });
    this.start = {
      dir: store.dir,
      planned: this.planned,
      withResults: past.done.size,
      threads: this.pool.threads,
      writer,
      run,
    };
  }

  private get abandoned(): boolean {
    return this.options.abandonSignal?.aborted === true;
  }

  private stopping(): boolean {
    return this.options.signal?.aborted === true || this.abandoned || this.fatal !== null;
  }

  private progress(): RunProgress {
    return {
      planned: this.planned,
      alreadyDone: this.alreadyDone,
      toRun: this.toRun,
      succeeded: this.succeeded,
      failed: this.failed,
      running: this.running(),
    };
  }

  /** Jobs in a thread now: handed to the pool and not yet waiting for a sync, at most one per thread. */
  private running(): number {
    return Math.min(this.pool.threads, this.inFlight.size - this.sinks.awaiting);
  }

  private report(): void {
    this.options.onProgress?.(this.progress());
  }

  /** Running jobs are abandoned and nothing more is written, so no record follows a torn line. */
  private failRun(error: unknown): void {
    if (this.fatal !== null) return;
    this.fatal = error;
    void this.pool.terminate();
    this.poke();
  }

  private readonly hardStop = (): void => {
    void this.pool.terminate();
    this.poke();
  };

  /** Graceful stop: jobs merely queued for a thread are taken back; running ones finish and are written. */
  private readonly softStop = (): void => {
    this.pool.withdrawQueued();
    this.poke();
  };

  /** Run every job of `jobs` without a result, until done, stopped or failed; throws the fatal error. */
  async execute(jobs: Iterable<PlannedJob>): Promise<void> {
    const { options } = this;
    options.abandonSignal?.addEventListener('abort', this.hardStop, { once: true });
    options.signal?.addEventListener('abort', this.softStop, { once: true });
    const stopListening = this.sinks.onAwaitingChange(this.poke);
    const ticker = setInterval(() => this.report(), 1000);
    ticker.unref();
    this.report();
    try {
      await this.feed(jobs);
      await Promise.all([...this.inFlight]);
    } finally {
      clearInterval(ticker);
      stopListening();
      options.abandonSignal?.removeEventListener('abort', this.hardStop);
      options.signal?.removeEventListener('abort', this.softStop);
      if (this.abandoned || this.fatal !== null) await this.pool.terminate();
      else await this.pool.close();
      try {
        this.sinks.syncAll();
      } catch (error) {
        if (this.fatal === null) this.fatal = error;
      }
      this.sinks.close();
    }
    this.report();
    if (this.fatal !== null) throw this.fatal;
  }

  private async feed(jobs: Iterable<PlannedJob>): Promise<void> {
    // Jobs handed to the pool and not yet waiting for a sync: as many as keep
    // every thread busy (more while jobs are short). A graceful stop takes the
    // queued ones back, so it never starts a job that was merely queued.
    let skipped = 0;
    for (const job of jobs) {
      if (this.stopping()) break;
      if (this.past.done.has(job.key)) {
        this.alreadyDone++;
        // Keep signals and progress responsive while skipping a long finished prefix.
        if (++skipped % SKIP_BATCH === 0) {
          this.report();
          await yieldToEventLoop();
        }
        continue;
      }
      while (this.inFlight.size - this.sinks.awaiting >= this.pool.appetite && !this.stopping()) {
        await new Promise<void>((wake) => {
          this.wake = wake;
        });
      }
      if (this.stopping()) break;
      this.launch(job);
    }
    // Whatever was not visited was not known to be done: correct the estimate.
    if (!this.stopping()) this.toRun = this.succeeded + this.failed + this.inFlight.size;
  }

  private launch(job: PlannedJob): void {
    const { sweep } = this.options;
    const attempt = (this.past.attempts.get(job.key) ?? 0) + 1;
    const task = this.runner
      .execute({ payload: toPayload(sweep, job), folder: sweep.spec.name, attempt })
      .then((result) => {
        this.count(job, attempt, result);
        this.report();
      })
      .catch((error: unknown) => {
        // An abandoned job writes nothing; anything else ends the run.
        if (isErrorOf(error, PoolTerminated) && (this.abandoned || this.fatal !== null)) return;
        // Taken back from the pool's queue by a graceful stop: it never started.
        if (isErrorOf(error, PoolClosed) && this.options.signal?.aborted === true) return;
        this.failRun(error);
      })
      .finally(() => {
        this.inFlight.delete(task);
        this.poke();
      });
    this.inFlight.add(task);
  }

  private count(job: PlannedJob, attempt: number, result: JobResult): void {
    if (this.fatal !== null) return;
    if (result.ok) {
      this.succeeded++;
      return;
    }
    this.failed++;
    const { logger } = this.options;
    if (this.failed <= LOGGED_FAILURES) {
      logger.warn({ key: job.key, kind: result.kind, attempt }, `job failed: ${result.message}`);
    } else if (this.failed === LOGGED_FAILURES + 1) {
      logger.warn(`more jobs failed; every failure is recorded in ${this.store.failuresDir}`);
    }
  }

  result(): RunSweepResult {
    const { options, past } = this;
    const stopped = this.abandoned ? 'abandoned' : options.signal?.aborted === true ? 'graceful' : null;
    const missing =
      stopped === null
        ? this.planned - this.alreadyDone - this.succeeded
        : Math.max(0, this.planned - past.done.size - this.succeeded);
    return {
      dir: this.store.dir,
      writer: this.start.writer,
      run: this.start.run,
      planned: this.planned,
      // A stopped run did not visit every job; the folder's count is the better figure then.
      alreadyDone: stopped === null ? this.alreadyDone : Math.min(this.planned, past.done.size),
      ran: this.succeeded + this.failed,
      succeeded: this.succeeded,
      failed: this.failed,
      missing,
      stopped,
      failuresDir: this.store.failuresDir,
      resultsDir: this.store.resultsDir,
    };
  }
}
