import type { Command } from 'commander';
import { defaultThreadCount } from '../../worker/thread-pool.js';
import { action, parseWholeNumber } from '../cli-support.js';
import { DEFAULT_JOB_LIMIT, formatPlan, loadSweepForCommand, planSweep } from '../plan-sweep.js';

/** Timing jobs run by default to turn operations into core-hours. */
export const DEFAULT_CALIBRATION_JOBS = 3;

interface PlanFlags {
  readonly maxJobs: string;
  readonly yes?: boolean;
  readonly calibrate: string;
}

export function registerPlan(program: Command): void {
  program
    .command('plan')
    .description(
      'Check a sweep file and show its jobs, a sample of its points and an estimate of core-hours; runs nothing else',
    )
    .argument('<file>', 'sweep file (YAML or JSON)')
    .option('--max-jobs <n>', 'refuse a sweep with more jobs than this', String(DEFAULT_JOB_LIMIT))
    .option('--yes', 'plan even when the sweep has more jobs than the limit')
    .option(
      '--calibrate <n>',
      'jobs to time on this machine for the estimate (0: report operations only)',
      String(DEFAULT_CALIBRATION_JOBS),
    )
    .action(
      action(async (file: string, flags: PlanFlags) => {
        const maxJobs = parseWholeNumber('--max-jobs', flags.maxJobs, 1);
        const calibrate = parseWholeNumber('--calibrate', flags.calibrate, 0, 1000);
        const sweep = await loadSweepForCommand(file, { maxJobs, yes: flags.yes === true });
        const plan = planSweep(sweep, { calibrate });
        process.stdout.write(formatPlan(plan, defaultThreadCount()));
      }),
    );
}
