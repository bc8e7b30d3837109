import { AdaptiveJobs } from '../shared/refine/design-jobs.js';
import { ResultStore } from '../shared/store/result-store.js';
import { type RunSweepOptions, type RunSweepResult, runSweep } from './run-sweep.js';

export interface AdaptiveRunResult extends RunSweepResult {
  /** The design has every trial it will ever ask for, and each has a result. */
  readonly complete: boolean;
  /** Passes of compute-design-then-run this call made. */
  readonly passes: number;
}

/**
 * Run an adaptive sweep to the end on this machine: compute the design from
 * the results in the folder, run its trials that have no result, and repeat
 * until the design asks for nothing new. The design depends on the results
 * only, so a run killed at any moment and started again ends with the same
 * points and replicates.
 */
export async function runAdaptiveSweep(options: RunSweepOptions): Promise<AdaptiveRunResult> {
  const { sweep } = options;
  const store = ResultStore.at(options.root, sweep.spec.name);
  await store.prepare(sweep);
  const adaptive = new AdaptiveJobs(sweep);
  let ran = 0;
  let succeeded = 0;
  let failed = 0;
  let alreadyDone: number | null = null;
  for (let passes = 1; ; passes++) {
    const metrics = new Map<string, Readonly<Record<string, unknown>>>();
    for await (const record of store.records()) metrics.set(record.key, record.metrics);
    const design = adaptive.design(metrics);
    const jobs = [...adaptive.jobs(design)];
    alreadyDone ??= jobs.filter((j) => metrics.has(j.key)).length;
    const result = await runSweep({ ...options, jobs: { count: jobs.length, list: jobs } });
    ran += result.ran;
    succeeded += result.succeeded;
    failed += result.failed;
    // Done when the design was complete, stopped, or a pass made no progress (every missing job failed).
    if (design.complete || result.stopped !== null || result.succeeded === 0) {
      const finished = design.complete && result.missing === 0;
      return {
        ...result,
        planned: jobs.length,
        alreadyDone,
        ran,
        succeeded,
        failed,
        complete: finished,
        passes,
      };
    }
  }
}
