import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';
import {
  inspector,
  type OwnRedis,
  type Running,
  readNdjson,
  removeDir,
  runCli,
  startCli,
  startOwnRedis,
  stopCli,
  tempDir,
  uniqueQueue,
  waitFor,
} from './helpers.js';

// Redis loses everything mid-sweep. This test wipes a redis-server of its own, never the shared one.

let redis: OwnRedis;
let root = '';
const started: Running[] = [];

beforeAll(async () => {
  redis = await startOwnRedis();
  root = await tempDir('loss');
});

afterAll(async () => {
  for (const r of started) await stopCli(r, 5_000);
  await redis?.stop();
  await removeDir(root);
});

async function keysOnDisk(dir: string): Promise<string[]> {
  return (await readNdjson(join(dir, 'results'))).map((r) => String(r['key']));
}

describe('a sweep whose Redis is emptied half-way', () => {
  it('is completed by requeue without running again any job that already has a result', async () => {
    const queue = uniqueQueue();
    const file = join(root, 'loss.yaml');
    await writeFile(
      file,
      'name: redis-loss\nmodel: cpu-burn\nseed: 2\nbatch: 1\nreplicates: 30\nfixed: { burnMs: 100 }\n',
    );
    const out = join(root, 'results');
    const dir = join(out, 'redis-loss');
    const submitted = await runCli([
      'submit',
      file,
      '--redis',
      redis.url,
      '--out',
      out,
      '--json',
      ...queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(submitted.code, submitted.stderr).toBe(0);
    expect(JSON.parse(submitted.stdout)).toMatchObject({ planned: 30, enqueued: 30 });

    const worker = startCli([
      'worker',
      '--redis',
      redis.url,
      '--threads',
      '1',
      '--out',
      out,
      ...queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    started.push(worker);
    await waitFor('some results', async () => ((await keysOnDisk(dir)).length >= 6 ? true : undefined), 60_000, 100);

    const client = await inspector(redis.url);
    try {
      await client.flushall();
    } finally {
      client.disconnect();
    }
    // A graceful stop lets the jobs the worker held at the flush finish and write their records: after it
    // the files hold everything that ran.
    await stopCli(worker);
    // The wipe is no reason to crash: the worker stopped as asked, without an error or fatal log line.
    expect((await worker.exited).code).toBe(0);
    expect(worker.output()).not.toMatch(/"level":[56]0/);
    const before = new Set(await keysOnDisk(dir));
    expect(before.size).toBeLessThan(30);

    const requeued = await runCli([
      'requeue',
      dir,
      '--redis',
      redis.url,
      '--json',
      ...queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(requeued.code, requeued.stderr).toBe(0);
    const r = JSON.parse(requeued.stdout) as Record<string, number>;
    expect(r['done']).toBe(before.size);
    expect(r['enqueued']).toBe(30 - before.size);

    const second = startCli([
      'worker',
      '--redis',
      redis.url,
      '--threads',
      '1',
      '--out',
      out,
      ...queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    started.push(second);
    await waitFor(
      'the sweep to finish',
      async () => (new Set(await keysOnDisk(dir)).size === 30 ? true : undefined),
      90_000,
      250,
    );
    await stopCli(second);
    expect(second.output()).not.toMatch(/"level":[56]0/);

    const all = await keysOnDisk(dir);
    const perKey = new Map<string, number>();
    for (const key of all) perKey.set(key, (perKey.get(key) ?? 0) + 1);
    expect(perKey.size).toBe(30);
    // One record per job: nothing ran twice, in particular nothing that had a result before the flush.
    expect([...perKey.entries()].filter(([, n]) => n > 1)).toEqual([]);
  });
});
