import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { enqueueMissing } from '../../coordinator/enqueue-missing.js';
import { MemoryQueue } from '../../shared/queue/memory/memory-queue.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { JobRunner } from '../../worker/job-runner.js';
import { QueueWorker } from '../../worker/queue-worker.js';
import { ShardSinks } from '../../worker/shard-sinks.js';
import { ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';
import { waitFor } from '../queue/helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// The worker's job handling (payload checks, thread pool, record on disk before the verdict) over
// the in-memory queue; the BullMQ consumer around it is tested against Redis in test/queue.

const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);

let root = '';
beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-qworker-'));
});
afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

async function lines(folder: string): Promise<Array<Record<string, unknown>>> {
  const out: Array<Record<string, unknown>> = [];
  for (const name of await readdir(folder).catch(() => [] as string[])) {
    for (const line of (await readFile(join(folder, name), 'utf8')).split('\n'))
      if (line !== '') out.push(JSON.parse(line) as Record<string, unknown>);
  }
  return out;
}

describe('a queue worker', () => {
  it('answers each job with the very record it wrote to disk, and fails a payload with a path in its sweep name without retries and without writing', async () => {
    const sweep = parseSweepText('name: qw\nmodel: no-op\nseed: 5\nreplicates: 4\n', 'qw.yaml');
    const queue = new MemoryQueue();
    await enqueueMissing(queue, sweep, new Set());
    queue.addRaw('hostile', { v: 1, sweep: { name: '../escape', hash: 'a'.repeat(64) } });
    const pool = new ThreadPool({ threads: 2, context: { writer: 'qw-writer', run: 'r1' }, entry: ENTRY });
    const sinks = new ShardSinks({ root, writer: 'qw-writer', durability: 'each-job' });
    const handler = new QueueWorker({ runner: new JobRunner({ pool, sinks, run: 'r1' }), resultsRoot: root });
    const consumer = queue.consume(handler.handle, { concurrency: handler.initialConcurrency });
    await consumer.start();
    try {
      await waitFor(
        'every job to be settled',
        async () => (queue.all().every((j) => j.state === 'completed' || j.state === 'failed') ? true : undefined),
        60_000,
        10,
      );
      await consumer.close();
    } finally {
      sinks.close();
      await pool.close();
    }
    const onDisk = await lines(join(root, 'qw', 'results'));
    const keys = [...expandJobs(sweep)].map((j) => j.key).sort();
    expect(onDisk.map((r) => r['key']).sort()).toEqual(keys);
    for (const record of onDisk) {
      const job = queue.job(sweep.hash, String(record['key']));
      expect(job?.state).toBe('completed');
      expect(JSON.parse(JSON.stringify(job?.value))).toEqual(record);
    }
    const hostile = queue.all().find((j) => j.id === 'hostile');
    expect(hostile).toMatchObject({ state: 'failed', attemptsMade: 1 });
    expect(hostile?.failedReason).toMatch(/^invalid: invalid job payload: .*sweep/);
    expect(await readdir(root)).toEqual(['qw']);
  });
});
