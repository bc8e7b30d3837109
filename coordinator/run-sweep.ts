import { randomBytes } from 'node:crypto';
import { setImmediate as yieldToEventLoop } from 'node:timers/promises';
import type { Logger } from '../shared/logger.js';
import type { FailureRecord } from '../shared/schemas/records.js';
import { newWriterId, ResultStore, type ShardFs, type StoreWarning } from '../shared/store/result-store.js';
import { countJobs, expandJobs, type PlannedJob, toPayload } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import type { JobOutcome } from '../worker/run-job.js';
import { ThreadPool } from '../worker/thread-pool.js';

/** What a progress display needs, sent after every finished job and once a second. */
export interface RunProgress {
  /** Jobs in the whole sweep. */
  readonly planned: number;
  /** Jobs that had a result before this run started (known so far). */
  readonly alreadyDone: number;
  /** Jobs this run means to execute (planned minus already done). */
  readonly toRun: number;
  readonly succeeded: number;
  readonly failed: number;
  readonly running: number;
}

export interface RunStart {
  readonly dir: string;
  readonly planned: number;
  /** Distinct jobs with a result in the folder before this run. */
  readonly withResults: number;
  readonly threads: number;
  readonly writer: string;
  readonly run: string;
}

export interface RunSweepOptions {
  readonly sweep: LoadedSweep;
  /** Results root; the sweep's folder is `<root>/<name>`. */
  readonly root: string;
  readonly threads: number;
  /** Graceful stop: no new jobs; running jobs finish and are written. */
  readonly signal?: AbortSignal;
  /** Hard stop: running jobs are abandoned at once (nothing half-written). */
  readonly abandonSignal?: AbortSignal;
  readonly onProgress?: (progress: RunProgress) => void;
  /** Called once the folder is ready and finished jobs are known, before any job starts. */
  readonly onStart?: (info: RunStart) => void;
  readonly logger: Logger;
  /** Seconds between fdatasync calls on the shard files. */
  readonly syncSeconds?: number;
  /** Thread script, for callers running from sources (tests); default: the compiled one. */
  readonly threadEntry?: URL;
  /** File calls of the shard writer (tests inject a failing disk); default: node:fs. */
  readonly shardFs?: ShardFs;
}

export interface RunSweepResult {
  readonly dir: string;
  readonly writer: string;
  readonly run: string;
  readonly planned: number;
  readonly alreadyDone: number;
  /** Jobs executed by this run (succeeded + failed). */
  readonly ran: number;
  readonly succeeded: number;
  readonly failed: number;
  /** Planned jobs that still have no result. */
  readonly missing: number;
  /** Why the run ended early, if it did. */
  readonly stopped: 'graceful' | 'abandoned' | null;
  readonly failuresDir: string;
  readonly resultsDir: string;
}

/** Failure messages logged individually before the log only counts them. */
const LOGGED_FAILURES = 5;

function abortPromise(signal: AbortSignal | undefined): Promise<void> {
  if (signal === undefined) return new Promise(() => {});
  if (signal.aborted) return Promise.resolve();
  return new Promise((resolve) => signal.addEventListener('abort', () => resolve(), { once: true }));
}

/**
 * Run every job of a sweep that has no result yet on a local thread pool,
 * appending results and failures to this process's own shard files. Safe to
 * kill at any moment: a later call with the same sweep runs only what is
 * still missing.
 */
export async function runSweep(options: RunSweepOptions): Promise<RunSweepResult> {
  const { sweep, logger } = options;
  const store = ResultStore.at(options.root, sweep.spec.name);
  await store.prepare(sweep);

  const onWarning = (w: StoreWarning): void => {
    logger.warn({ file: w.file, line: w.line, kind: w.kind }, w.message);
  };
  const done = await store.completedKeys({ onWarning });
  // Attempt numbers continue from earlier runs' failure records.
  const previousAttempts = new Map<string, number>();
  for await (const failure of store.failures({ onWarning })) {
    if (!done.has(failure.key))
      previousAttempts.set(failure.key, Math.max(previousAttempts.get(failure.key) ?? 0, failure.attempt));
  }

  const planned = countJobs(sweep);
  const runId = randomBytes(6).toString('hex');
  const writer = store.openWriter(newWriterId(), options.shardFs);
  const pool = new ThreadPool({
    threads: options.threads,
    context: { writer: writer.writer, run: runId },
    ...(options.threadEntry === undefined ? {} : { entry: options.threadEntry }),
  });
  const start: RunStart = {
    dir: store.dir,
    planned,
    withResults: done.size,
    threads: pool.threads,
    writer: writer.writer,
    run: runId,
  };
  // Debug level: commands print their own lines for people; this is for log files.
  logger.debug(start, 'sweep run started');
  options.onStart?.(start);

  let alreadyDone = 0;
  let succeeded = 0;
  let failed = 0;
  let fatal: unknown = null;
  const inFlight = new Set<Promise<void>>();
  // Results already on disk all belong to this sweep (same hash), so this is
  // exact unless shards hold keys the plan no longer makes.
  let toRun = Math.max(0, planned - done.size);

  const progress = (): RunProgress => ({ planned, alreadyDone, toRun, succeeded, failed, running: inFlight.size });
  const report = (): void => options.onProgress?.(progress());

  const hardStop = (): void => {
    void pool.terminate();
  };
  // The first fatal error (a shard write that failed, a broken pool) ends the
  // run at once: running jobs are abandoned and nothing more is written, so
  // no record is appended after a torn line.
  const failRun = (error: unknown): void => {
    if (fatal !== null) return;
    fatal = error;
    void pool.terminate();
  };
  options.abandonSignal?.addEventListener('abort', hardStop, { once: true });
  const stopping = (): boolean =>
    options.signal?.aborted === true || options.abandonSignal?.aborted === true || fatal !== null;

  const record = (job: PlannedJob, outcome: JobOutcome): void => {
    if (fatal !== null) return;
    if (outcome.ok) {
      writer.appendResult(outcome.record);
      succeeded++;
      return;
    }
    const attempt = (previousAttempts.get(job.key) ?? 0) + 1;
    const failure: FailureRecord = {
      v: 1,
      key: job.key,
      sweepHash: sweep.hash,
      kind: outcome.kind,
      message: outcome.message,
      point: job.point,
      replicate: job.replicate,
      writer: writer.writer,
      run: runId,
      at: new Date().toISOString(),
      attempt,
    };
    writer.appendFailure(failure);
    failed++;
    if (failed <= LOGGED_FAILURES) {
      logger.warn({ key: job.key, kind: outcome.kind, attempt }, `job failed: ${outcome.message}`);
    } else if (failed === LOGGED_FAILURES + 1) {
      logger.warn(`more jobs failed; every failure is recorded in ${store.failuresDir}`);
    }
  };

  const launch = (job: PlannedJob): void => {
    const task = pool
      .run(toPayload(sweep, job))
      .then((outcome) => {
        record(job, outcome);
        report();
      })
      .catch((error: unknown) => {
        // An abandoned job writes nothing; anything else ends the run.
        if (
          (error as { name?: unknown } | null)?.name === 'PoolTerminated' &&
          (options.abandonSignal?.aborted === true || fatal !== null)
        )
          return;
        failRun(error);
      })
      .finally(() => {
        inFlight.delete(task);
      });
    inFlight.add(task);
  };

  const syncEvery = (options.syncSeconds ?? 5) * 1000;
  let lastSync = performance.now();
  const ticker = setInterval(() => {
    report();
    if (performance.now() - lastSync >= syncEvery) {
      lastSync = performance.now();
      try {
        writer.sync();
      } catch (error) {
        failRun(error);
      }
    }
  }, 1000);
  ticker.unref();

  const stopRequested = Promise.race([abortPromise(options.signal), abortPromise(options.abandonSignal)]);
  // Jobs handed to the pool at once: one per thread, so a graceful stop never
  // starts a job that was merely queued.
  const limit = pool.threads;
  report();
  try {
    let skipped = 0;
    for (const job of expandJobs(sweep)) {
      if (stopping()) break;
      if (done.has(job.key)) {
        alreadyDone++;
        // Keep signals and progress responsive while skipping a long finished prefix.
        if (++skipped % 5000 === 0) {
          report();
          await yieldToEventLoop();
        }
        continue;
      }
      while (inFlight.size >= limit && !stopping()) {
        await Promise.race([...inFlight, stopRequested]);
      }
      if (stopping()) break;
      launch(job);
    }
    // Whatever was not visited was not known to be done: correct the estimate.
    if (!stopping()) toRun = succeeded + failed + inFlight.size;
    await Promise.all([...inFlight]);
  } finally {
    clearInterval(ticker);
    options.abandonSignal?.removeEventListener('abort', hardStop);
    if (options.abandonSignal?.aborted === true || fatal !== null) await pool.terminate();
    else await pool.close();
    try {
      writer.sync();
    } catch (error) {
      if (fatal === null) fatal = error;
    }
    writer.close();
  }
  report();
  if (fatal !== null) throw fatal;

  const stopped =
    options.abandonSignal?.aborted === true ? 'abandoned' : options.signal?.aborted === true ? 'graceful' : null;
  const missing = stopped === null ? planned - alreadyDone - succeeded : Math.max(0, planned - done.size - succeeded);
  const result: RunSweepResult = {
    dir: store.dir,
    writer: writer.writer,
    run: runId,
    planned,
    // A stopped run did not visit every job; the folder's count is the better figure then.
    alreadyDone: stopped === null ? alreadyDone : Math.min(planned, done.size),
    ran: succeeded + failed,
    succeeded,
    failed,
    missing,
    stopped,
    failuresDir: store.failuresDir,
    resultsDir: store.resultsDir,
  };
  logger.debug({ ...result }, 'sweep run ended');
  return result;
}

/** Stop requests from the terminal or a supervisor, in two steps. */
export interface StopSignals {
  /** Aborted by the first SIGINT/SIGTERM: finish running jobs, start no more. */
  readonly graceful: AbortSignal;
  /** Aborted by the second: abandon running jobs. */
  readonly abandon: AbortSignal;
  dispose(): void;
}

/**
 * Install SIGINT/SIGTERM handlers for a run. `say` tells the person what is
 * happening (the first signal is otherwise silent while jobs finish).
 */
export function stopOnSignals(say: (line: string) => void): StopSignals {
  const graceful = new AbortController();
  const abandon = new AbortController();
  const onSignal = (signal: NodeJS.Signals): void => {
    if (!graceful.signal.aborted) {
      say(`${signal}: stopping after the running jobs finish (send it again to abandon them)`);
      graceful.abort();
    } else if (!abandon.signal.aborted) {
      say(`${signal}: abandoning the running jobs`);
      abandon.abort();
    }
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  return {
    graceful: graceful.signal,
    abandon: abandon.signal,
    dispose() {
      process.off('SIGINT', onSignal);
      process.off('SIGTERM', onSignal);
    },
  };
}
