import { readdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { EVENT_STREAM_LENGTH } from '../../shared/queue/bullmq/bullmq-work-queue.js';
import { jobIdFor } from '../../shared/queue/bullmq/job-ids.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { loadSweepFile } from '../../shared/sweep/load.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import {
  deleteKeys,
  inspector,
  removeDir,
  runCli,
  SHARED_REDIS,
  startCli,
  submitJson,
  tempDir,
  uniqueQueue,
  waitFor,
} from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

let root = '';
const queue = uniqueQueue();

beforeAll(async () => {
  root = await tempDir('submit');
});

afterAll(async () => {
  await deleteKeys(SHARED_REDIS, queue.prefix);
  await removeDir(root);
});

const waitKey = `${queue.prefix}:${queue.name}:wait`;

describe('submit', () => {
  it('refuses a sweep over the job limit without --yes, touching neither Redis nor the disk', async () => {
    const file = join(root, 'limit.yaml');
    await writeFile(
      file,
      'name: over-limit\nmodel: no-op\nseed: 1\nbatch: 1\nreplicates: 10\nvary:\n  value: { from: 1, to: 10, steps: 10 }\n',
    );
    const out = join(root, 'limit-results');
    const client = await inspector(SHARED_REDIS);
    try {
      const refused = await runCli([
        'submit',
        file,
        '--redis',
        SHARED_REDIS,
        '--out',
        out,
        '--max-jobs',
        '50',
        ...queue.flags,
        ...TEST_MODEL_FLAGS,
      ]);
      expect(refused.code).toBe(2);
      expect(refused.stderr).toContain('100 jobs');
      expect(refused.stderr).toContain('--yes');
      expect(await client.keys(`${queue.prefix}:*`)).toEqual([]);
      await expect(readdir(out)).rejects.toThrow(/ENOENT/);

      const accepted = await runCli([
        'submit',
        file,
        '--redis',
        SHARED_REDIS,
        '--out',
        out,
        '--max-jobs',
        '50',
        '--yes',
        '--json',
        ...queue.flags,
        ...TEST_MODEL_FLAGS,
      ]);
      expect(accepted.code, accepted.stderr).toBe(0);
      expect(JSON.parse(accepted.stdout)).toMatchObject({ planned: 100, enqueued: 100 });
      await runCli(['cancel', join(out, 'over-limit'), '--redis', SHARED_REDIS, ...queue.flags, ...TEST_MODEL_FLAGS]);
    } finally {
      client.disconnect();
    }
  });

  it('killed during a large submit and run again, leaves every job in the queue exactly once', async () => {
    const file = join(root, 'big.yaml');
    await writeFile(
      file,
      'name: big-submit\nmodel: no-op\nseed: 1\nbatch: 1\nreplicates: 100\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n',
    );
    const out = join(root, 'results');
    const client = await inspector(SHARED_REDIS);
    try {
      const first = startCli([
        'submit',
        file,
        '--redis',
        SHARED_REDIS,
        '--out',
        out,
        ...queue.flags,
        ...TEST_MODEL_FLAGS,
      ]);
      // Kill as soon as the first chunk (1,000 jobs, added in one transaction) is there: nine more
      // chunks would have to land in the few milliseconds before the signal for the submit to finish.
      await waitFor(
        'the first jobs in Redis',
        async () => ((await client.llen(waitKey)) > 0 ? true : undefined),
        90_000,
        10,
      );
      first.child.kill('SIGKILL');
      await first.exited;
      const partial = await client.llen(waitKey);
      expect(partial).toBeGreaterThan(0);
      if (partial === 10_000) {
        // A stalled test process let the first submit finish: the checks below still hold (nothing to add).
        console.log('the first submit finished before it was killed; checking the second one all the same');
      }

      const second = await submitJson(file, out, queue);
      expect(second.code, second.stderr).toBe(0);
      const report = JSON.parse(second.stdout) as Record<string, number>;
      expect(report['planned']).toBe(10_000);
      expect(report['inQueue'] ?? 0).toBeGreaterThanOrEqual(partial);
      expect((report['inQueue'] ?? 0) + (report['enqueued'] ?? 0)).toBe(10_000);

      const ids = await client.lrange(waitKey, 0, -1);
      expect(ids).toHaveLength(10_000);
      expect(new Set(ids).size).toBe(10_000);
      // Every planned job is there under its id (expected ids from the sweep module, not from submit).
      const sweep = await loadSweepFile(file);
      const expected = new Set([...expandJobs(sweep)].map((job) => jobIdFor(sweep.hash, job.key)));
      expect(expected.size).toBe(10_000);
      expect(ids.every((id) => expected.has(id))).toBe(true);

      // A third submit adds nothing.
      const third = await submitJson(file, out, queue);
      expect(JSON.parse(third.stdout)).toMatchObject({ enqueued: 0, inQueue: 10_000 });
      expect(await client.llen(waitKey)).toBe(10_000);

      // cancel removes them all, requeue puts them all back.
      const dir = join(out, 'big-submit');
      const cancelled = await runCli([
        'cancel',
        dir,
        '--redis',
        SHARED_REDIS,
        '--json',
        ...queue.flags,
        ...TEST_MODEL_FLAGS,
      ]);
      expect(JSON.parse(cancelled.stdout)).toMatchObject({ removed: 10_000, active: 0 });
      expect(await client.llen(waitKey)).toBe(0);
      const requeued = await runCli([
        'requeue',
        dir,
        '--redis',
        SHARED_REDIS,
        '--json',
        ...queue.flags,
        ...TEST_MODEL_FLAGS,
      ]);
      expect(JSON.parse(requeued.stdout)).toMatchObject({ enqueued: 10_000, done: 0 });
      expect(await client.llen(waitKey)).toBe(10_000);
    } finally {
      client.disconnect();
    }
  });

  it('keeps the queue event stream short: a submit of 1,000 one-trial jobs leaves at most 200 entries', async () => {
    const file = join(root, 'events.yaml');
    await writeFile(
      file,
      'name: event-stream\nmodel: no-op\nseed: 4\nbatch: 1\nreplicates: 10\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n',
    );
    const submitted = await submitJson(file, join(root, 'events-results'), queue);
    expect(submitted.code, submitted.stderr).toBe(0);
    expect(JSON.parse(submitted.stdout)).toMatchObject({ enqueued: 1000 });
    const client = await inspector(SHARED_REDIS);
    try {
      const base = `${queue.prefix}:${queue.name}`;
      // Each added job writes an event; the stream is trimmed to about EVENT_STREAM_LENGTH (100) entries,
      // approximately: Redis drops whole nodes of up to 100 entries (stream-node-max-entries; Redis docs, XADD MAXLEN ~).
      expect(await client.hget(`${base}:meta`, 'opts.maxLenEvents')).toBe(String(EVENT_STREAM_LENGTH));
      const length = await client.xlen(`${base}:events`);
      expect(length).toBeGreaterThanOrEqual(EVENT_STREAM_LENGTH);
      expect(length).toBeLessThanOrEqual(EVENT_STREAM_LENGTH + 100);
    } finally {
      client.disconnect();
    }
  });
});
