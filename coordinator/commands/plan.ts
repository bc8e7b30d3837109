import type { Command } from 'commander';
import { ResultStore } from '../../shared/store/result-store.js';
import type { LoadedSweep } from '../../shared/sweep/load.js';
import { defaultThreadCount } from '../../worker/thread-pool.js';
import { action, parseWholeNumber } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import {
  DEFAULT_JOB_LIMIT,
  formatPlan,
  loadSweepForCommand,
  type PlanCores,
  planSweep,
  wallSeconds,
} from '../plan-sweep.js';
import { displayPath } from '../shell-text.js';

/** Timing jobs run by default to turn operations into core-hours. */
export const DEFAULT_CALIBRATION_JOBS = 3;

interface PlanFlags extends ModelCliOptions {
  readonly maxJobs: string;
  readonly yes?: boolean;
  readonly calibrate: string;
  readonly out: string;
  readonly cores?: string;
  readonly json?: boolean;
}

/** Most cores an estimate is made for: far beyond any cluster, small enough to stay exact. */
const MAX_CORES = 1_000_000;

/**
 * Keys of the jobs that already have a result in `<out>/<name>/`, when that
 * folder holds this very sweep; nothing is created or changed.
 */
async function existingResults(
  sweep: LoadedSweep,
  out: string,
): Promise<{ readonly keys?: Set<string>; readonly dir: string } | null> {
  const store = ResultStore.at(out, sweep.spec.name);
  const stored = await store.readStored();
  if (stored === undefined) return null;
  const dir = displayPath(store.dir);
  return stored.hash === sweep.hash ? { keys: await store.completedKeys(), dir } : { dir };
}

export function registerPlan(program: Command): void {
  defineCommand(program, 'plan')
    .option('--max-jobs <n>', 'refuse a sweep with more jobs than this', String(DEFAULT_JOB_LIMIT))
    .option('--yes', 'plan even when the sweep has more jobs than the limit')
    .option(
      '--calibrate <n>',
      'jobs to time on this machine for the estimate (0: report operations only)',
      String(DEFAULT_CALIBRATION_JOBS),
    )
    .option(
      '--out <dir>',
      'results root to look in: jobs with a result in <dir>/<name> are left out of the estimate',
      'results',
    )
    .option(
      '--cores <n>',
      "estimate the wall-clock time for this many cores, e.g. all workers' threads (default: this machine's)",
    )
    .option('--json', 'print the plan as one JSON object')
    .addOption(modelsOption())
    .action(
      action(async (file: string, flags: PlanFlags) => {
        await useModelOptions(flags);
        const maxJobs = parseWholeNumber('--max-jobs', flags.maxJobs, 1);
        const calibrate = parseWholeNumber('--calibrate', flags.calibrate, 0, 1000);
        const cores: PlanCores =
          flags.cores === undefined
            ? { count: defaultThreadCount(), unit: 'thread' }
            : { count: parseWholeNumber('--cores', flags.cores, 1, MAX_CORES), unit: 'core' };
        const sweep = await loadSweepForCommand(file, { maxJobs, yes: flags.yes === true });
        const results = await existingResults(sweep, flags.out);
        const done = results?.keys;
        const plan = await planSweep(sweep, { calibrate, ...(done === undefined ? {} : { done }) });
        const where =
          results === null ? {} : done === undefined ? { otherSweepDir: results.dir } : { resultsDir: results.dir };
        if (flags.json === true) {
          const wall = wallSeconds(plan, cores.count);
          process.stdout.write(`${JSON.stringify({ ...plan, cores, wallSeconds: wall, ...where })}\n`);
          return;
        }
        process.stdout.write(formatPlan(plan, { cores, ...where }));
      }),
    );
}
