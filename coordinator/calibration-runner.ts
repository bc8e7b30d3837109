import { AdaptiveJobs } from '../shared/refine/design-jobs.js';
import type { Point } from '../shared/schemas/records.js';
import { toPayload } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { runModelAsync } from '../worker/run-model.js';
import { ThreadPool } from '../worker/thread-pool.js';

/**
 * Longest a timing job of `plan` (and of `submit`, which sizes batches from
 * the same figures) may run. Parameter sets inside a model's limits can run
 * for hours; a plan must still answer, so a timing job over this is stopped.
 */
export const CALIBRATION_LIMIT_MS = 20_000;

/** One timing run: its seconds, or why it gave none. */
export type TimingResult =
  | { readonly ok: true; readonly seconds: number }
  | { readonly ok: false; readonly message: string; readonly overLimit: boolean };

/**
 * Runs timing jobs of one sweep. Built-in models, which run synchronously,
 * run in a one-thread pool with the calibration limit, so a job over it is
 * stopped and its thread replaced; asynchronous models (external programs
 * and modules) keep their own time limit and run here.
 */
export class CalibrationRunner {
  private readonly jobs: AdaptiveJobs;
  private pool: ThreadPool | null = null;

  constructor(
    private readonly sweep: LoadedSweep,
    private readonly limitMs = CALIBRATION_LIMIT_MS,
  ) {
    this.jobs = new AdaptiveJobs(sweep);
  }

  /** Time replicate 0 of a point (its real job: the same key and seed a run gives it). */
  async time(point: Point): Promise<TimingResult> {
    const job = this.jobs.job(point, 0);
    if (this.sweep.model.runAsync !== undefined) {
      try {
        const run = await runModelAsync(this.sweep.model, job.params, job.seed, { key: job.key });
        return { ok: true, seconds: run.elapsedMs / 1000 };
      } catch (error) {
        const message = error instanceof Error ? `${error.name}: ${error.message}` : String(error);
        return { ok: false, message, overLimit: false };
      }
    }
    this.pool ??= new ThreadPool({
      threads: 1,
      context: { writer: 'plan', run: 'calibration' },
      jobTimeoutMs: this.limitMs,
    });
    const outcome = await this.pool.run(toPayload(this.sweep, job));
    if (outcome.ok) return { ok: true, seconds: outcome.record.elapsedMs / 1000 };
    const overLimit = outcome.kind === 'timeout';
    const message = overLimit
      ? `ran longer than ${this.limitMs / 1000} s and was stopped; this sweep's trials take at least that long`
      : `${outcome.kind}: ${outcome.message}`;
    return { ok: false, message, overLimit };
  }

  async close(): Promise<void> {
    await this.pool?.terminate();
    this.pool = null;
  }
}
