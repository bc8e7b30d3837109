import type { Command } from 'commander';
import { InputError } from '../../shared/errors.js';
import { DEFAULT_LOCK_MS, DEFAULT_MAX_STALLED, DEFAULT_STALL_CHECK_MS } from '../../shared/queue/work-consumer.js';
import { defaultThreadCount, MAX_THREADS } from '../../worker/thread-pool.js';
import { runWorkerProcess } from '../../worker/worker-process.js';
import { action, parseWholeNumber } from '../cli-support.js';
import { defineCommand } from '../command-specs.js';
import { type ModelCliOptions, modelsOption, modelTimeoutOption, useModelOptions } from '../model-options.js';
import { addQueueOptions, type QueueCliOptions, queueSettings, WORKER_CONNECT_TIMEOUT_MS } from '../queue-session.js';

interface WorkerOptions extends QueueCliOptions, ModelCliOptions {
  readonly threads?: string;
  readonly out: string;
  readonly name?: string;
  readonly nice?: string;
  readonly prefetch: string;
  readonly lockMs: string;
  readonly stallCheckMs: string;
  readonly maxStalled: string;
}

export function registerWorker(program: Command): void {
  addQueueOptions(
    defineCommand(program, 'worker')
      .option('--threads <n>', 'simulations run at once, one thread each (default: one per core)')
      .option('--out <dir>', 'results root; results of sweep S go to <dir>/S/results/<worker name>.ndjson', 'results')
      .option('--name <id>', 'worker name: its result files are <id>-<pid>-<random>.ndjson (default: the host name)')
      .option('--nice <n>', 'run at a lower CPU priority, from 0 (normal) to 19 (lowest), as on shared machines')
      .option(
        '--prefetch <n>',
        'jobs to hold beyond one per thread, so short jobs wait less for Redis; "auto" holds some only while jobs take under 0.1 s',
        'auto',
      )
      .option(
        '--lock-ms <ms>',
        "job lock duration; a dead worker's job is taken over after about lock + stall check",
        String(DEFAULT_LOCK_MS),
      )
      .option('--stall-check-ms <ms>', 'how often to look for jobs whose worker died', String(DEFAULT_STALL_CHECK_MS))
      .option('--max-stalled <n>', 'times a job may lose its worker before it is failed', String(DEFAULT_MAX_STALLED))
      .addOption(modelsOption())
      .addOption(modelTimeoutOption('pool')),
    true,
    WORKER_CONNECT_TIMEOUT_MS,
  ).action(
    action(async (options: WorkerOptions) => {
      await useModelOptions(options);
      // Every option is checked before anything starts: bad input exits with 2.
      const settings = queueSettings(options);
      const threads =
        options.threads === undefined
          ? defaultThreadCount()
          : parseWholeNumber('--threads', options.threads, 1, MAX_THREADS);
      const lockMs = parseWholeNumber('--lock-ms', options.lockMs, 500, 3_600_000);
      const stallCheckMs = parseWholeNumber('--stall-check-ms', options.stallCheckMs, 200, 3_600_000);
      const maxStalledCount = parseWholeNumber('--max-stalled', options.maxStalled, 0, 100);
      const prefetch = options.prefetch === 'auto' ? 'auto' : parsePrefetch(options.prefetch);
      const nice = options.nice === undefined ? undefined : parseWholeNumber('--nice', options.nice, 0, 19);
      if (options.name !== undefined && !/^[a-z0-9][a-z0-9._-]{0,99}$/.test(options.name)) {
        throw new InputError(
          `--name: use 1 to 100 of a-z, 0-9, ".", "_", "-", starting with a letter or digit (got "${options.name}")`,
          [{ path: '--name', message: 'a-z, 0-9, ".", "_", "-" only' }],
        );
      }
      await runWorkerProcess({
        settings,
        threads,
        out: options.out,
        name: options.name,
        nice,
        prefetch,
        lockMs,
        stallCheckMs,
        maxStalledCount,
      });
    }),
  );
}

function parsePrefetch(raw: string): number {
  try {
    return parseWholeNumber('--prefetch', raw, 0, 1000);
  } catch {
    const message = `--prefetch: must be "auto" or a whole number from 0 to 1000, got "${raw}"`;
    throw new InputError(message, [{ path: '--prefetch', message }]);
  }
}
