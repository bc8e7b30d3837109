import { randomBytes } from 'node:crypto';
import { readdirSync } from 'node:fs';
import { setPriority } from 'node:os';
import { resolve } from 'node:path';
import type { Command } from 'commander';
import { InputError } from '../../shared/errors.js';
import { createLogger } from '../../shared/logger.js';
import { newWriterId } from '../../shared/store/result-store.js';
import {
  DEFAULT_LOCK_MS,
  DEFAULT_MAX_STALLED,
  DEFAULT_STALL_CHECK_MS,
  QueueConsumer,
} from '../../worker/queue-consumer.js';
import { defaultThreadCount, ThreadPool } from '../../worker/thread-pool.js';
import { action, parseWholeNumber } from '../cli-support.js';
import { addQueueOptions, type QueueCliOptions, queueSettings } from '../queue-session.js';
import { closeRedis, connectRedis } from '../redis-connect.js';

interface WorkerOptions extends QueueCliOptions {
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
    program
      .command('worker')
      .description('Serve queued jobs of any sweep until stopped (Ctrl-C or SIGTERM finishes running jobs first)')
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
      .option('--max-stalled <n>', 'times a job may lose its worker before it is failed', String(DEFAULT_MAX_STALLED)),
  ).action(action(runWorker));
}

async function runWorker(options: WorkerOptions): Promise<void> {
  // Every option is checked before anything starts: bad input exits with 2.
  const settings = queueSettings(options);
  const threads =
    options.threads === undefined ? defaultThreadCount() : parseWholeNumber('--threads', options.threads, 1, 1024);
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
  // Linux gives a new thread its creator's nice value, so this must come before the pool exists.
  if (nice !== undefined) lowerPriority(nice);
  const logger = createLogger({ name: 'worker' });
  const { client, target } = await connectRedis({
    url: settings.url,
    connectTimeoutMs: settings.connectTimeoutMs,
    longLived: true,
    connectionName: 'recallscape-worker',
    logger,
  });
  let stopping = false;
  let fatal: string | undefined;
  let wake: () => void = () => undefined;
  const writer = newWriterId(options.name);
  const run = randomBytes(6).toString('hex');
  const pool = new ThreadPool({ threads, context: { writer, run } });
  const consumer = new QueueConsumer({
    connection: client,
    queue: settings.queue,
    pool,
    resultsRoot: options.out,
    writer,
    run,
    prefetch,
    lockMs,
    stallCheckMs,
    maxStalledCount,
    logger,
    onFatal: (reason) => {
      logger.error({ reason }, 'cannot run jobs; stopping');
      fatal = reason;
      wake();
    },
  });

  const stopped = new Promise<void>((done) => {
    wake = done;
    let firstAt = 0;
    const onSignal = (signal: NodeJS.Signals): void => {
      // Some supervisors deliver one stop request twice (to the process and its group) within milliseconds.
      if (stopping && Date.now() - firstAt < 500) return;
      if (stopping) {
        // Second signal: leave now; unacknowledged jobs are taken over by other workers.
        logger.warn({ signal }, 'stopping immediately');
        process.exit(130);
      }
      stopping = true;
      firstAt = Date.now();
      logger.info({ signal }, 'stopping: finishing running jobs (signal again to stop at once)');
      done();
    };
    process.on('SIGINT', onSignal);
    process.on('SIGTERM', onSignal);
  });

  await consumer.start();
  logger.info(
    {
      redis: target.masked,
      queue: settings.queue.name,
      prefix: settings.queue.prefix,
      threads,
      prefetch,
      out: resolve(options.out),
      writer,
      lockMs,
      stallCheckMs,
      nice,
    },
    'worker ready',
  );
  await stopped;
  await consumer.close();
  await (fatal === undefined ? pool.close() : pool.terminate());
  await closeRedis(client);
  logger.info({ completed: consumer.counts.completed, failed: consumer.counts.failed }, 'worker stopped');
  if (fatal !== undefined) throw new Error(`worker stopped: ${fatal}`);
}

/**
 * Lower the CPU priority of the whole process. Linux keeps a nice value per
 * thread: setPriority(0) changes only the calling thread (which every
 * simulation thread created later inherits), so the threads that exist
 * already (garbage collector helpers, I/O pool) are lowered one by one.
 */
function lowerPriority(nice: number): void {
  try {
    setPriority(nice);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code ?? 'error';
    throw new InputError(`--nice: cannot set priority ${nice} (${code})`, [
      { path: '--nice', message: `cannot set priority (${code})` },
    ]);
  }
  let tasks: string[] = [];
  try {
    tasks = readdirSync('/proc/self/task');
  } catch {
    return; // Not Linux: the process-wide call above was all there is to do.
  }
  for (const tid of tasks) {
    try {
      setPriority(Number(tid), nice);
    } catch {
      // A thread that ended meanwhile.
    }
  }
}

function parsePrefetch(raw: string): number {
  try {
    return parseWholeNumber('--prefetch', raw, 0, 1000);
  } catch {
    const message = `--prefetch must be "auto" or a whole number from 0 to 1000, got "${raw}"`;
    throw new InputError(message, [{ path: '--prefetch', message }]);
  }
}
