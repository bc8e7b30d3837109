import { Writable } from 'node:stream';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { afterEach, describe, expect, it } from 'vitest';
import { createLogger } from '../../shared/logger.js';
import { BullmqConsumer } from '../../shared/queue/bullmq/bullmq-consumer.js';
import type { ConsumedJob, JobVerdict } from '../../shared/queue/work-consumer.js';
import { deleteKeys, startOwnRedis, uniqueQueue, waitFor } from './helpers.js';

// Redis loses a job while a worker runs it, and the job is queued again under its fixed id (as
// finish and requeue do). The worker still running the first copy must not break the second:
// BullMQ renews locks by job id, so the end of the first copy used to stop the renewals of the
// second, which then stalled until it failed for good. A redis-server of the test's own: a late write
// of the worker after the test cannot leave keys on the shared server.

interface Logged {
  readonly msg?: string;
  readonly job?: string;
}

const cleanups: Array<() => Promise<void>> = [];

afterEach(async () => {
  while (cleanups.length > 0) await cleanups.pop()?.();
});

describe('a job queued again while an earlier copy of it still runs in the same worker', () => {
  it('waits for the earlier copy to end, then runs and completes instead of stalling until it fails', async () => {
    const redis = await startOwnRedis();
    cleanups.push(() => redis.stop());
    const queue = uniqueQueue();
    const target = { name: queue.name, prefix: queue.prefix };
    const logged: Logged[] = [];
    const logger = createLogger({
      name: 'test',
      level: 'debug',
      destination: new Writable({
        write: (chunk, _e, done) => {
          logged.push(JSON.parse(String(chunk)) as Logged);
          done();
        },
      }),
    });
    const producer = new Queue(target.name, {
      prefix: target.prefix,
      connection: new Redis(redis.url, { maxRetriesPerRequest: null }),
    });
    cleanups.push(async () => {
      await producer.close();
      await deleteKeys(redis.url, target.prefix);
    });

    let releaseFirst: () => void = () => undefined;
    const firstMayEnd = new Promise<void>((done) => {
      releaseFirst = done;
    });
    const calls: ConsumedJob[] = [];
    const handler = async (job: ConsumedJob): Promise<JobVerdict> => {
      calls.push(job);
      // The first copy runs until the test lets it end; a later copy runs for several lock periods,
      // so a lock that is not renewed would expire while it runs.
      if (calls.length === 1) await firstMayEnd;
      else await new Promise((done) => setTimeout(done, 2_500));
      return { kind: 'done', value: `copy ${calls.length}` };
    };
    const consumer = new BullmqConsumer(new Redis(redis.url, { maxRetriesPerRequest: null }), target, handler, {
      concurrency: 2,
      lockMs: 600,
      stallCheckMs: 300,
      maxStalledCount: 1,
      logger,
    });
    cleanups.push(() => consumer.close());
    await consumer.start();

    await producer.add('job', { n: 1 }, { jobId: 'same-id', attempts: 3 });
    await waitFor('the first copy to run', async () => (calls.length === 1 ? true : undefined), 20_000, 20);

    // Redis loses the job, and it is queued again under the same id.
    await deleteKeys(redis.url, target.prefix);
    await producer.add('job', { n: 1 }, { jobId: 'same-id', attempts: 3 });
    await waitFor(
      'the worker to take the second copy while the first still runs',
      async () =>
        logged.some((l) => l.msg?.startsWith('an earlier copy of this job') === true) || calls.length > 1
          ? true
          : undefined,
      20_000,
      20,
    );
    expect(calls).toHaveLength(1);
    releaseFirst();

    const state = await waitFor(
      'the job to end',
      async () => {
        const s = await producer.getJobState('same-id');
        return s === 'completed' || s === 'failed' ? s : undefined;
      },
      30_000,
      50,
    );
    const job = await producer.getJob('same-id');
    expect(state, job?.failedReason).toBe('completed');
    expect(job?.returnvalue).toBe('copy 2');
    expect(calls).toHaveLength(2);
    expect(consumer.counts.failed).toBe(0);
  });
});
