import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { keyOfJobId } from '../../shared/queue/bullmq/job-ids.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import { inspector, runCli, SHARED_REDIS, startCli, useQueueSandbox, waitFor } from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// Integration: real worker processes (built dist/) against the shared Redis on 127.0.0.1:6379.

const box = useQueueSandbox('ack-durable');

describe('a job acknowledged by a worker under group commit', () => {
  it('has its record on disk when the worker is killed with SIGKILL right after the acknowledgement, over several kills', async () => {
    // 600 no-op jobs: each worker gets through a few before it is killed.
    const file = join(box.root, 'acks.yaml');
    await writeFile(
      file,
      'name: ack-durable\nmodel: no-op\nseed: 9\nbatch: 1\nreplicates: 60\nvary:\n  value: { from: 1, to: 10, steps: 10 }\n',
    );
    const out = join(box.root, 'results');
    const submitted = await runCli([
      'submit',
      file,
      '--redis',
      SHARED_REDIS,
      '--out',
      out,
      ...box.queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(submitted.code, submitted.stderr).toBe(0);
    const client = await inspector(SHARED_REDIS);
    const completedKey = `${box.queue.prefix}:${box.queue.name}:completed`;
    const store = ResultStore.at(out, 'ack-durable');
    try {
      let acknowledged = 0;
      for (let round = 1; round <= 3; round++) {
        const worker = startCli(
          ['worker', '--redis', SHARED_REDIS, '--threads', '1', '--out', out, ...box.queue.flags, ...TEST_MODEL_FLAGS],
          {
            RECALLSCAPE_LOG_LEVEL: 'warn',
          },
        );
        box.started.push(worker);
        // The moment Redis shows a job of this worker completed, kill it.
        await waitFor(
          `a job acknowledged in round ${round}`,
          async () => ((await client.zcard(completedKey)) > acknowledged ? true : undefined),
          60_000,
          2,
        );
        worker.child.kill('SIGKILL');
        expect((await worker.exited).signal).toBe('SIGKILL');

        // Every job acknowledged so far, by this worker or an earlier one, has its record on disk.
        const ids = await client.zrange(completedKey, 0, -1);
        expect(ids.length).toBeGreaterThan(acknowledged);
        expect(ids.length).toBeLessThan(600);
        acknowledged = ids.length;
        const onDisk = await store.completedKeys();
        const missing = ids.map((id) => keyOfJobId(id)).filter((key) => key === undefined || !onDisk.has(key));
        expect(missing, `round ${round}: acknowledged jobs without a record`).toEqual([]);
      }
      expect(acknowledged).toBeGreaterThanOrEqual(3);
    } finally {
      client.disconnect();
    }
  });
});
