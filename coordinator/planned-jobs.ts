import { AdaptiveJobs } from '../shared/refine/design-jobs.js';
import type { ResultStore } from '../shared/store/result-store.js';
import { countJobs, type PlannedJob } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';

/** The jobs a sweep asks for at this moment. */
export interface PlannedNow {
  /** The jobs, or undefined for a plain sweep: all of expandJobs, listed lazily where they are used. */
  readonly jobs: readonly PlannedJob[] | undefined;
  readonly count: number;
  /** Whether these are all the jobs the sweep will ever ask for (always, for a plain sweep). */
  readonly final: boolean;
}

/**
 * Every job of a plain sweep; for an adaptive one (refine), the trials of its
 * design given the results in the folder so far. The design is a pure
 * function of the sweep and those results, so any process (submit, requeue,
 * finish, a restarted one) computes the same jobs from the same folder.
 */
export async function plannedNow(store: ResultStore, sweep: LoadedSweep): Promise<PlannedNow> {
  if (sweep.spec.refine === undefined) return { jobs: undefined, count: countJobs(sweep), final: true };
  const metrics = new Map<string, Readonly<Record<string, unknown>>>();
  for await (const record of store.records()) {
    if (record.sweepHash === sweep.hash) metrics.set(record.key, record.metrics);
  }
  const adaptive = new AdaptiveJobs(sweep);
  const design = adaptive.design(metrics);
  const jobs = [...adaptive.jobs(design)];
  return { jobs, count: jobs.length, final: design.complete };
}
