import { Queue } from 'bullmq';
import { afterAll, describe, expect, it } from 'vitest';
import { createLogger } from '../../shared/logger.js';
import { openWorkConsumer, openWorkQueue } from '../../shared/queue/backends.js';
import { jobIdFor, jobIdPrefix } from '../../shared/queue/bullmq/job-ids.js';
import type { QueueSettings } from '../../shared/queue/queue-settings.js';
import type { JobHandler, WorkConsumer } from '../../shared/queue/work-consumer.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';
import { deleteKeys, inspector, SHARED_REDIS, uniqueQueue, waitFor } from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// cancel against workers that keep finishing jobs while it runs (issue 9, item 4).

const queue = uniqueQueue();
const settings: QueueSettings = {
  url: SHARED_REDIS,
  masked: SHARED_REDIS,
  queue: { name: queue.name, prefix: queue.prefix },
  connectTimeoutMs: 5_000,
};
const consumerOptions = {
  concurrency: 16,
  lockMs: 10_000,
  stallCheckMs: 5_000,
  maxStalledCount: 2,
  logger: createLogger({ name: 'test', level: 'silent' }),
};

afterAll(async () => {
  await deleteKeys(SHARED_REDIS, queue.prefix);
});

/** Ids of one sweep in a BullMQ state set or list, read straight from Redis. */
async function idsIn(state: string, kind: 'list' | 'zset', idPrefix: string): Promise<string[]> {
  const client = await inspector(SHARED_REDIS);
  try {
    const key = `${queue.prefix}:${queue.name}:${state}`;
    const ids = kind === 'list' ? await client.lrange(key, 0, -1) : await client.zrange(key, 0, -1);
    return ids.filter((id) => id.startsWith(idPrefix));
  } finally {
    client.disconnect();
  }
}

describe('cancel while workers finish jobs', () => {
  it('removes only jobs that had not started, never a finished one, and its count is exact', async () => {
    // 6,000 no-op jobs: 60 values x 100 replicates.
    const values = Array.from({ length: 60 }, (_, i) => i);
    const sweep = parseSweepText(
      `name: cancel-race\nmodel: no-op\nbatch: 1\nreplicates: 100\nvary:\n  value: { list: [${values.join(', ')}] }\n`,
      'inline',
    );
    const jobs = [...expandJobs(sweep)];
    expect(jobs.length).toBe(6_000);
    const work = await openWorkQueue(settings);
    const started = new Set<string>();
    const handler: JobHandler = async (job) => {
      started.add(job.id);
      return { kind: 'done', value: { finished: job.id } };
    };
    const consumers: WorkConsumer[] = [];
    let removed = 0;
    try {
      const added = await work.add(
        { hash: sweep.hash, name: sweep.spec.name },
        jobs.map((job) => ({ key: job.key, payload: toPayload(sweep, job) })),
        { retryFailed: false },
      );
      expect(added.added).toBe(6_000);
      for (let i = 0; i < 2; i++) {
        const consumer = await openWorkConsumer(settings, handler, consumerOptions);
        consumers.push(consumer);
        await consumer.start();
      }
      // Cancel once the workers are well under way, so jobs finish during the whole of it.
      await waitFor('workers to be under way', async () => (started.size >= 300 ? true : undefined), 60_000, 20);
      removed = await work.cancel(sweep.hash);
      const startedWhenCancelled = started.size;
      // Closing waits for the jobs the workers hold to finish and be acknowledged.
      for (const consumer of consumers.splice(0)) await consumer.close();

      // Nothing of this sweep is left waiting: a second cancel finds nothing.
      expect(await work.cancel(sweep.hash)).toBe(0);
      // Workers took no job after cancel had returned.
      expect(started.size).toBe(startedWhenCancelled);
      // Some ran and some were cancelled, otherwise the test shows nothing.
      expect(removed).toBeGreaterThan(0);
      expect(started.size).toBeGreaterThan(0);
      // Every job either ran or was removed, never both: the counts add up exactly.
      expect(removed + started.size).toBe(jobs.length);

      // Every job a worker ran is still in Redis as completed, with the value it returned.
      const prefix = jobIdPrefix(sweep.hash);
      const completed = new Set(await idsIn('completed', 'zset', prefix));
      expect([...started].filter((id) => !completed.has(id))).toEqual([]);
      expect(completed.size).toBe(started.size);
      const reader = new Queue(queue.name, {
        connection: (await inspector(SHARED_REDIS)).duplicate(),
        prefix: queue.prefix,
      });
      try {
        const sample = [...started].slice(0, 50);
        for (const id of sample) expect((await reader.getJob(id))?.returnvalue).toEqual({ finished: id });
        // A removed job left nothing behind: no hash under its id.
        const gone = jobs.map((job) => jobIdFor(sweep.hash, job.key)).filter((id) => !started.has(id));
        expect(gone.length).toBe(removed);
        for (const id of gone.slice(0, 200)) expect(await reader.getJob(id)).toBeUndefined();
      } finally {
        await reader.close();
      }
      expect(await idsIn('wait', 'list', prefix)).toEqual([]);
      expect(await idsIn('active', 'list', prefix)).toEqual([]);
    } finally {
      for (const consumer of consumers) await consumer.close();
      await work.close();
    }
  });

  it('leaves the jobs of another sweep in the same queue alone', async () => {
    const mine = parseSweepText('name: cancel-mine\nmodel: no-op\nbatch: 1\nreplicates: 1500\n', 'inline');
    const theirs = parseSweepText('name: cancel-theirs\nmodel: no-op\nbatch: 1\nreplicates: 2500\n', 'inline');
    const work = await openWorkQueue(settings);
    try {
      // Interleaved, so cancel has to pass over the other sweep's entries page after page.
      const mineJobs = [...expandJobs(mine)];
      const theirJobs = [...expandJobs(theirs)];
      for (let i = 0; i < 5; i++) {
        await work.add(
          { hash: theirs.hash, name: theirs.spec.name },
          theirJobs.slice(i * 500, (i + 1) * 500).map((job) => ({ key: job.key, payload: toPayload(theirs, job) })),
          { retryFailed: false },
        );
        await work.add(
          { hash: mine.hash, name: mine.spec.name },
          mineJobs.slice(i * 300, (i + 1) * 300).map((job) => ({ key: job.key, payload: toPayload(mine, job) })),
          { retryFailed: false },
        );
      }
      expect(await work.cancel(mine.hash)).toBe(1_500);
      expect(await work.counts(mine.hash)).toEqual({ waiting: 0, active: 0, delayed: 0, failed: 0 });
      expect(await work.counts(theirs.hash)).toEqual({ waiting: 2_500, active: 0, delayed: 0, failed: 0 });
      expect(await work.cancel(theirs.hash)).toBe(2_500);
    } finally {
      await work.close();
    }
  });

  it('removes a job of the sweep whose stored data is not JSON, waiting or delayed', async () => {
    const sweep = parseSweepText('name: cancel-raw\nmodel: no-op\nbatch: 1\nreplicates: 3\n', 'inline');
    const [first, second, third] = [...expandJobs(sweep)];
    if (first === undefined || second === undefined || third === undefined) throw new Error('three jobs expected');
    const client = await inspector(SHARED_REDIS);
    const producer = new Queue(queue.name, { connection: client.duplicate(), prefix: queue.prefix });
    const work = await openWorkQueue(settings);
    try {
      // Written as a writer to Redis could: a job under one of the sweep's ids, its data then overwritten.
      const raw = async (key: string, data: string): Promise<string> => {
        const id = jobIdFor(sweep.hash, key);
        await producer.add('raw', {}, { jobId: id, delay: 3_600_000 });
        await client.hset(`${queue.prefix}:${queue.name}:${id}`, 'data', data);
        return id;
      };
      await raw(first.key, '{"v":1, not json');
      await raw(second.key, '\u0000\u0001');
      // The first two go to waiting; the third stays delayed.
      await producer.promoteJobs();
      await raw(third.key, 'not json either');
      expect(await work.counts(sweep.hash)).toEqual({ waiting: 2, active: 0, delayed: 1, failed: 0 });
      expect(await work.cancel(sweep.hash)).toBe(3);
      expect(await work.counts(sweep.hash)).toEqual({ waiting: 0, active: 0, delayed: 0, failed: 0 });
      expect(await client.exists(`${queue.prefix}:${queue.name}:${jobIdFor(sweep.hash, third.key)}`)).toBe(0);
    } finally {
      await producer.close();
      await work.close();
      client.disconnect();
    }
  });
});
