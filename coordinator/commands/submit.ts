import type { Command } from 'commander';
import { createLogger } from '../../shared/logger.js';
import { MAX_BATCH_TRIALS, TARGET_BATCH_SECONDS } from '../../shared/queue/batch-size.js';
import { REDIS_URL_ENV } from '../../shared/redis-url.js';
import { action, parseWholeNumber } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, useModelOptions } from '../model-options.js';
import { DEFAULT_JOB_LIMIT, loadSweepForCommand } from '../plan-sweep.js';
import { addQueueOptions, type QueueCliOptions, queueFlags, queueSettings } from '../queue-session.js';
import { shellWord } from '../shell-text.js';
import { type SubmitResult, submitSweep } from '../submit-sweep.js';

interface SubmitOptions extends QueueCliOptions, ModelCliOptions {
  readonly out: string;
  readonly json?: boolean;
  readonly maxJobs: string;
  readonly yes?: boolean;
  readonly batch?: string;
}

export function registerSubmit(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'submit')
      .option('--out <dir>', 'results root; the sweep gets the folder <dir>/<name>', 'results')
      .option('--json', 'print the counts as one JSON object')
      .option('--max-jobs <n>', 'refuse a sweep with more jobs than this', String(DEFAULT_JOB_LIMIT))
      .option('--yes', 'queue the sweep even when it has more jobs than --max-jobs')
      .option(
        '--batch <n>',
        `trials per queue job, 1 to ${MAX_BATCH_TRIALS} (default: the sweep file's batch, or sized from the calibrated trial cost to about ${TARGET_BATCH_SECONDS} s a job)`,
      )
      .addOption(modelsOption()),
  ).action(
    action(async (file: string, options: SubmitOptions) => {
      await useModelOptions(options);
      const settings = queueSettings(options);
      // Bad files and oversized sweeps are refused before Redis or the disk is touched.
      const maxJobs = parseWholeNumber('--max-jobs', options.maxJobs, 1);
      const batch =
        options.batch === undefined ? undefined : parseWholeNumber('--batch', options.batch, 1, MAX_BATCH_TRIALS);
      const sweep = await loadSweepForCommand(file, { maxJobs, yes: options.yes === true });
      const logger = createLogger({ name: 'submit' });
      const result = await submitSweep(sweep, options.out, settings, logger, { batch });
      process.stdout.write(
        options.json === true
          ? `${JSON.stringify(result)}\n`
          : describe(result, settings.queue.name, workerCommand(options)),
      );
      if (sweep.spec.refine !== undefined && options.json !== true) {
        // Only the design so far is queued: its later trials depend on the results.
        process.stdout.write(
          `adaptive   these are the trials decided so far; \`recallscape finish ${result.dir}\` queues the rest as results come in\n`,
        );
      }
    }),
  );
}

/**
 * The command that starts a worker for this sweep. The Redis URL is not in it:
 * it goes in the environment variable, as docs/operations.md advises (a URL
 * on the command line, password and all, is visible in process lists).
 */
function workerCommand(options: SubmitOptions): string {
  return ['recallscape', 'worker', '--out', options.out, ...queueFlags(options)].map(shellWord).join(' ');
}

function describe(r: SubmitResult, queue: string, worker: string): string {
  const lines = [
    `sweep      ${r.name}`,
    `hash       ${r.hash}`,
    `folder     ${r.dir}`,
    `planned    ${r.planned}`,
    `done       ${r.done} (results on disk)`,
    `in queue   ${r.inQueue} (already in Redis, waiting, running or not yet gathered)`,
    `batch      ${r.batchSize} trial${r.batchSize === 1 ? '' : 's'} per queue job`,
  ];
  if (r.failedKept > 0)
    lines.push(
      `failed     ${r.failedKept} (in the failed set; \`recallscape requeue ${r.dir} --failed\` tries them again)`,
    );
  lines.push(`added      ${r.enqueued} to queue "${queue}"`);
  if (r.enqueued + r.inQueue > 0)
    lines.push(`next       start workers where ${REDIS_URL_ENV} names this Redis: ${worker}`);
  return `${lines.join('\n')}\n`;
}
