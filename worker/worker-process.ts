import { randomBytes } from 'node:crypto';
import { resolve } from 'node:path';
import { createLogger } from '../shared/logger.js';
import { externalModelSettings } from '../shared/models/external/settings.js';
import { openWorkConsumer } from '../shared/queue/backends.js';
import type { QueueSettings } from '../shared/queue/queue-settings.js';
import { newWriterId } from '../shared/store/result-store.js';
import { JobRunner } from './job-runner.js';
import { lowerPriority } from './lower-priority.js';
import { QueueWorker } from './queue-worker.js';
import { ShardSinks } from './shard-sinks.js';
import { ThreadPool } from './thread-pool.js';

/** Everything `recallscape worker` was told, already checked. */
export interface WorkerProcessOptions {
  readonly settings: QueueSettings;
  readonly threads: number;
  /** Results root. */
  readonly out: string;
  /** Start of the shard file names (default: the host name). */
  readonly name: string | undefined;
  readonly nice: number | undefined;
  readonly prefetch: number | 'auto';
  readonly lockMs: number;
  readonly stallCheckMs: number;
  readonly maxStalledCount: number;
}

/**
 * The worker process: serve queued jobs of any sweep until SIGINT/SIGTERM
 * (the first lets running jobs finish and be acknowledged, a second leaves at
 * once) or until the thread pool can run nothing.
 */
export async function runWorkerProcess(options: WorkerProcessOptions): Promise<void> {
  // Linux gives a new thread its creator's nice value, so this must come before the pool exists.
  if (options.nice !== undefined) lowerPriority(options.nice);
  const logger = createLogger({ name: 'worker', style: 'service' });
  let stopping = false;
  let fatal: string | undefined;
  let wake: () => void = () => undefined;
  const writer = newWriterId(options.name);
  const run = randomBytes(6).toString('hex');
  const pool = new ThreadPool({
    threads: options.threads,
    context: { writer, run },
    // The job fails as `timeout` (recorded by the job runner, not retried); this says what happened to the thread.
    onTimeout: ({ payload, limit, threads }) =>
      logger.warn(
        { key: payload?.key, sweep: payload?.sweep.name, limitMs: limit.ms, limitFrom: limit.source, threads },
        'a job ran over its time limit; its thread was stopped and replaced',
      ),
  });
  const sinks = new ShardSinks({ root: options.out, writer, durability: 'each-job' });
  const queueWorker = new QueueWorker({
    runner: new JobRunner({ pool, sinks, run }),
    resultsRoot: options.out,
    prefetch: options.prefetch,
    sinks,
    onFatal: (reason) => {
      logger.error({ reason }, 'cannot run jobs; stopping');
      fatal = reason;
      wake();
    },
  });
  let consumer: Awaited<ReturnType<typeof openWorkConsumer>>;
  try {
    consumer = await openWorkConsumer(options.settings, queueWorker.handle, {
      concurrency: queueWorker.initialConcurrency,
      lockMs: options.lockMs,
      stallCheckMs: options.stallCheckMs,
      maxStalledCount: options.maxStalledCount,
      logger,
    });
  } catch (error) {
    await pool.terminate();
    throw error;
  }
  queueWorker.attach(consumer);

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
      redis: options.settings.masked,
      queue: options.settings.queue.name,
      prefix: options.settings.queue.prefix,
      threads: options.threads,
      prefetch: options.prefetch,
      out: resolve(options.out),
      writer,
      lockMs: options.lockMs,
      stallCheckMs: options.stallCheckMs,
      nice: options.nice,
      jobTimeoutMs: externalModelSettings().timeoutMs ?? 'per job',
    },
    'worker ready',
  );
  await stopped;
  await consumer.close();
  sinks.close();
  await (fatal === undefined ? pool.close() : pool.terminate());
  logger.info({ completed: consumer.counts.completed, failed: consumer.counts.failed }, 'worker stopped');
  if (fatal !== undefined) throw new Error(`worker stopped: ${fatal}`);
}
