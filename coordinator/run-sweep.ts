import { ResultStore } from '../shared/store/result-store.js';
import { expandJobs } from '../shared/sweep/expand.js';
import { EmbeddedRun } from './embedded-run.js';
import { readPastRuns } from './past-runs.js';
import type { RunSweepOptions, RunSweepResult } from './run-sweep-types.js';

export type { RunProgress, RunStart, RunSweepOptions, RunSweepResult } from './run-sweep-types.js';

export async function runSweep(options: RunSweepOptions): Promise<RunSweepResult> {
  const { sweep, logger } = options;
  const store = ResultStore.at(options.root, sweep.spec.name);
  await store.prepare(sweep);
  const past = await readPastRuns(store, logger);
  const run = new EmbeddedRun(options, store, past);
  // Debug level: commands print their own lines for people; this is for log files.
  logger.debug(run.start, 'sweep run started');
  options.onStart?.(run.start);
  await run.execute(options.jobs?.list ?? expandJobs(sweep));
  const result = run.result();
  logger.debug({ ...result }, 'sweep run ended');
  return result;
}
