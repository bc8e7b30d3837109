import * as fs from 'node:fs';
import { Queue } from 'bullmq';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { queueSettings } from '../../coordinator/queue-session.js';
import { createLogger } from '../../shared/logger.js';
import { openWorkConsumer } from '../../shared/queue/backends.js';
import { jobIdFor } from '../../shared/queue/bullmq/job-ids.js';
import type { WorkConsumer } from '../../shared/queue/work-consumer.js';
import type { ShardFs } from '../../shared/store/result-store.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { JobRunner } from '../../worker/job-runner.js';
import { QueueWorker } from '../../worker/queue-worker.js';
import { ShardSinks } from '../../worker/shard-sinks.js';
import { ThreadPool } from '../../worker/thread-pool.js';
import { nodeShardFs } from '../fixtures/shard-fs.js';
import { useTestModels } from '../fixtures/test-models.js';
import { deleteKeys, removeDir, SHARED_REDIS, tempDir, uniqueQueue, waitFor } from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// A worker (one thread, prefetch 'auto') over the shared Redis, with group commit:
// how many jobs it holds for records that wait for a sync.

const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);
let queue = uniqueQueue();
let root = '';

beforeEach(async () => {
  root = await tempDir('sync-allowance');
  queue = uniqueQueue();
});

afterEach(async () => {
  await deleteKeys(SHARED_REDIS, queue.prefix);
  await removeDir(root);
});

/** node:fs whose asynchronous fdatasync waits for the test while `holding` is on. */
function holdingFs() {
  const held: Array<() => void> = [];
  const state = { holding: true };
  const shardFs = nodeShardFs({
    fdatasync: (fd, done) => {
      const run = (): void => fs.fdatasync(fd, done);
      if (state.holding) held.push(run);
      else run();
    },
  });
  return {
    fs: shardFs,
    held,
    releaseAll(): void {
      for (const run of held.splice(0)) run();
    },
    stopHolding(): void {
      state.holding = false;
      this.releaseAll();
    },
  };
}

async function startWorker(yaml: string, shardFs: ShardFs | undefined) {
  const sweep = parseSweepText(yaml, 'test');
  const jobs = [...expandJobs(sweep)];
  const producer = new Queue(queue.name, { connection: { host: '127.0.0.1', port: 6379 }, prefix: queue.prefix });
  await producer.addBulk(
    jobs.map((job) => ({ name: 'job', data: toPayload(sweep, job), opts: { jobId: jobIdFor(sweep.hash, job.key) } })),
  );
  await producer.close();
  const pool = new ThreadPool({ threads: 1, context: { writer: 'allowance-test', run: 'r1' }, entry: ENTRY });
  const sinks = new ShardSinks({
    root,
    writer: 'allowance-test',
    durability: 'each-job',
    ...(shardFs === undefined ? {} : { fs: shardFs }),
  });
  const handler = new QueueWorker({
    runner: new JobRunner({ pool, sinks, run: 'r1' }),
    resultsRoot: root,
    prefetch: 'auto',
    sinks,
  });
  const consumer: WorkConsumer = await openWorkConsumer(
    queueSettings({ redis: SHARED_REDIS, queue: queue.name, prefix: queue.prefix, connectTimeout: '5000' }),
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
  return {
    consumer,
    sinks,
    jobs: jobs.length,
    async stop(): Promise<void> {
      await consumer.close();
      sinks.close();
      await pool.close();
    },
  };
}

describe('a worker whose records wait for a group commit', () => {
  it('holds more jobs after each sync during which every held job ended up waiting for it, so the thread keeps running', async () => {
    const gate = holdingFs();
    const worker = await startWorker(
      'name: allowance\nmodel: no-op\nseed: 4\nreplicates: 40\nvary:\n  value: { from: 1, to: 10, steps: 10 }\n',
      gate.fs,
    );
    try {
      // While a sync is held, the thread runs every job the worker holds, and then all of them wait for it.
      const stuck: number[] = [];
      for (let round = 1; round <= 3; round++) {
        await waitFor(
          `round ${round}: every held job waiting for the sync`,
          async () =>
            gate.held.length === 1 && worker.sinks.awaiting === worker.consumer.concurrency ? true : undefined,
          30_000,
          10,
        );
        stuck.push(worker.sinks.awaiting);
        gate.releaseAll();
      }
      // First one job (prefetch 'auto' starts without extras), then prefetch and allowance, then a larger allowance.
      expect(stuck[0]).toBe(1);
      expect(stuck[1]).toBeGreaterThan(stuck[0]!);
      expect(stuck[2]).toBeGreaterThan(stuck[1]!);
      gate.stopHolding();
      await waitFor(
        'every job done',
        async () => (worker.consumer.counts.completed >= worker.jobs ? true : undefined),
        60_000,
        50,
      );
    } finally {
      gate.stopHolding();
      await worker.stop();
    }
  });

  it('holds no extra job while jobs take longer than a tenth of a second', async () => {
    const worker = await startWorker(
      'name: allowance-long\nmodel: cpu-burn\nseed: 1\nreplicates: 4\nfixed: { burnMs: 200 }\n',
      undefined,
    );
    try {
      await waitFor(
        'every job done',
        async () => (worker.consumer.counts.completed >= worker.jobs ? true : undefined),
        60_000,
        50,
      );
      expect(worker.consumer.concurrency).toBe(1);
    } finally {
      await worker.stop();
    }
  });
});
