import { Queue } from 'bullmq';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createLogger } from '../../shared/logger.js';
import { openWorkConsumer } from '../../shared/queue/backends.js';
import { jobIdFor } from '../../shared/queue/bullmq/job-ids.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { JobRunner } from '../../worker/job-runner.js';
import { AUTO_PREFETCH_PER_THREAD, QueueWorker } from '../../worker/queue-worker.js';
import { ShardSinks } from '../../worker/shard-sinks.js';
import { ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';
import { deleteKeys, removeDir, SHARED_REDIS, tempDir, uniqueQueue, waitFor } from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// With --prefetch auto a worker holds extra jobs only while jobs are short.

const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);
const queue = uniqueQueue();
let root = '';

beforeAll(async () => {
  root = await tempDir('prefetch');
});

afterAll(async () => {
  await deleteKeys(SHARED_REDIS, queue.prefix);
  await removeDir(root);
});

/** Enqueue a sweep, serve it with one thread and prefetch 'auto', return the consumer's final concurrency. */
async function serve(yaml: string): Promise<{ concurrency: number; completed: number; jobs: number }> {
  const sweep = parseSweepText(yaml, 'test');
  const jobs = [...expandJobs(sweep)];
  const producer = new Queue(queue.name, { connection: { host: '127.0.0.1', port: 6379 }, prefix: queue.prefix });
  await producer.addBulk(
    jobs.map((job) => ({ name: 'job', data: toPayload(sweep, job), opts: { jobId: jobIdFor(sweep.hash, job.key) } })),
  );
  // The threads load the built entry (vitest runs this file from sources).
  const pool = new ThreadPool({ threads: 1, context: { writer: 'prefetch-test', run: 'r1' }, entry: ENTRY });
  const sinks = new ShardSinks({ root, writer: 'prefetch-test', durability: 'each-job' });
  const handler = new QueueWorker({
    runner: new JobRunner({ pool, sinks, run: 'r1' }),
    resultsRoot: root,
    prefetch: 'auto',
  });
  const consumer = await openWorkConsumer(
    {
      url: SHARED_REDIS,
      masked: SHARED_REDIS,
      queue: { name: queue.name, prefix: queue.prefix },
      connectTimeoutMs: 5_000,
    },
    handler.handle,
    {
      concurrency: handler.initialConcurrency,
      lockMs: 10_000,
      stallCheckMs: 5_000,
      maxStalledCount: 2,
      logger: createLogger({ name: 'test', level: 'silent' }),
    },
  );
  handler.attach(consumer);
  await consumer.start();
  try {
    await waitFor(
      'every job done',
      async () => (consumer.counts.completed >= jobs.length ? true : undefined),
      60_000,
      50,
    );
    return { concurrency: consumer.concurrency, completed: consumer.counts.completed, jobs: jobs.length };
  } finally {
    await consumer.close();
    sinks.close();
    await pool.close();
    await producer.close();
  }
}

describe('a worker with prefetch auto', () => {
  it('holds extra jobs while jobs take milliseconds', async () => {
    const result = await serve('name: short-jobs\nmodel: no-op\nseed: 1\nbatch: 1\nreplicates: 40\n');
    expect(result.completed).toBe(40);
    expect(result.concurrency).toBe(1 + AUTO_PREFETCH_PER_THREAD);
  });

  it('holds none while jobs take longer than a tenth of a second', async () => {
    const result = await serve(
      'name: long-jobs\nmodel: cpu-burn\nseed: 1\nbatch: 1\nreplicates: 4\nfixed: { burnMs: 250 }\n',
    );
    expect(result.completed).toBe(4);
    expect(result.concurrency).toBe(1);
  });
});
