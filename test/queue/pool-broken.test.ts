import { Queue } from 'bullmq';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createLogger } from '../../shared/logger.js';
import { openWorkConsumer } from '../../shared/queue/backends.js';
import { jobIdFor } from '../../shared/queue/bullmq/job-ids.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { JobRunner } from '../../worker/job-runner.js';
import { PoolBroken } from '../../worker/pool-errors.js';
import { QueueWorker } from '../../worker/queue-worker.js';
import { ShardSinks } from '../../worker/shard-sinks.js';
import type { ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';
import { deleteKeys, removeDir, SHARED_REDIS, tempDir, uniqueQueue, waitFor } from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// A worker whose threads cannot run anything (e.g. a broken build) must not
// burn the attempts of the jobs it takes: they go back to waiting untouched.

const queue = uniqueQueue();
let root = '';

beforeAll(async () => {
  root = await tempDir('broken');
});

afterAll(async () => {
  await deleteKeys(SHARED_REDIS, queue.prefix);
  await removeDir(root);
});

describe('a worker whose thread pool is broken', () => {
  it('hands the job back to the queue without using an attempt and reports the fault once', async () => {
    const sweep = parseSweepText('name: broken-pool\nmodel: no-op\nseed: 3\nreplicates: 1\n', 'test');
    const [job] = [...expandJobs(sweep)];
    if (job === undefined) throw new Error('the sweep has no job');
    const id = jobIdFor(sweep.hash, job.key);
    const producer = new Queue(queue.name, { connection: { host: '127.0.0.1', port: 6379 }, prefix: queue.prefix });
    await producer.add('job', toPayload(sweep, job), { jobId: id, attempts: 4 });

    const faults: string[] = [];
    const brokenPool = {
      threads: 1,
      run: () => Promise.reject(new PoolBroken('3 threads in a row died before loading')),
    } as unknown as ThreadPool;
    const handler = new QueueWorker({
      runner: new JobRunner({
        pool: brokenPool,
        sinks: new ShardSinks({ root, writer: 'broken-test', durability: 'each-job' }),
        run: 'r1',
      }),
      resultsRoot: root,
      onFatal: (reason) => faults.push(reason),
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
        concurrency: 1,
        lockMs: 10_000,
        stallCheckMs: 5_000,
        maxStalledCount: 2,
        logger: createLogger({ name: 'test', level: 'silent' }),
      },
    );
    await consumer.start();
    try {
      await waitFor('the fault to be reported', async () => (faults.length > 0 ? true : undefined), 30_000, 50);
      await consumer.close();
      const stored = await producer.getJob(id);
      expect(await stored?.getState()).toBe('waiting');
      // Not one of its four attempts was used, and it never counted as failed.
      expect(stored?.attemptsMade).toBe(0);
      expect(stored?.failedReason ?? '').toBe('');
      expect(faults[0]).toContain('died before loading');
    } finally {
      await producer.close();
    }
  });
});
