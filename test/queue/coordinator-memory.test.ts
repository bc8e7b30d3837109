import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { cancelIn } from '../../coordinator/cancel.js';
import { enqueueMissing } from '../../coordinator/enqueue-missing.js';
import { gatherFrom } from '../../coordinator/gather.js';
import { sweepProgress } from '../../coordinator/queue-progress.js';
import { requeueIn } from '../../coordinator/requeue.js';
import { submitTo } from '../../coordinator/submit-sweep.js';
import { JOB_ATTEMPTS } from '../../shared/queue/job-policy.js';
import { MemoryQueue } from '../../shared/queue/memory/memory-queue.js';
import type { JobVerdict } from '../../shared/queue/work-consumer.js';
import type { ResultRecord } from '../../shared/schemas/records.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob, toPayload } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { runJob } from '../../worker/run-job.js';
import { useTestModels } from '../fixtures/test-models.js';
import { waitFor } from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// The coordinator's queue logic (submit, requeue, gather, cancel, progress) against the in-memory
// queue: no Redis, so these run in milliseconds. The BullMQ backend has its own real-Redis tests.

const TEXT =
  'name: memory-sweep\nmodel: no-op\nseed: 7\nreplicates: 3\nbatch: 1\nvary:\n  value: { list: [1, 2, 3, 4] }\n';

let root = '';
let sweep: LoadedSweep;
let jobs: PlannedJob[];

beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-memq-'));
  sweep = parseSweepText(TEXT, 'memory.yaml');
  jobs = [...expandJobs(sweep)];
});

afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

/** The record a worker would return for a job (run for real, as the thread does). */
function recordOf(job: PlannedJob): ResultRecord {
  const outcome = runJob(toPayload(sweep, job), { writer: 'memory-worker', run: 'r1' });
  if (!outcome.ok) throw new Error(`${outcome.kind}: ${outcome.message}`);
  return outcome.record;
}

/** Serve every waiting job with `verdict` and wait until none is waiting or running. */
async function serve(queue: MemoryQueue, verdict: (data: unknown) => JobVerdict): Promise<void> {
  const consumer = queue.consume(async (job) => verdict(job.data), { concurrency: 2 });
  await consumer.start();
  await waitFor(
    'the queue to be idle',
    async () => {
      const { waiting, active } = await queue.counts(sweep.hash);
      return waiting + active === 0 ? true : undefined;
    },
    5_000,
    5,
  );
  await consumer.close();
}

function jobOf(data: unknown): PlannedJob {
  const key = (data as { key: string }).key;
  const job = jobs.find((j) => j.key === key);
  if (job === undefined) throw new Error(`no job ${key}`);
  return job;
}

describe('submit against a queue', () => {
  it('queues every planned job once, and a second submit adds nothing and says so', async () => {
    const queue = new MemoryQueue();
    const first = await submitTo(queue, sweep, root);
    expect(first).toMatchObject({ planned: 12, done: 0, inQueue: 0, enqueued: 12 });
    // Expected keys from the sweep module, not from submit.
    expect(
      queue
        .all()
        .map((j) => j.key)
        .sort(),
    ).toEqual(jobs.map((j) => j.key).sort());
    const second = await submitTo(queue, sweep, root);
    expect(second).toMatchObject({ planned: 12, done: 0, inQueue: 12, enqueued: 0 });
  });

  it('skips jobs that have a result on disk', async () => {
    const store = ResultStore.at(root, sweep.spec.name);
    await store.prepare(sweep);
    const writer = store.openWriter('disk-writer');
    for (const job of jobs.slice(0, 5)) writer.appendResult(recordOf(job));
    writer.close();
    const queue = new MemoryQueue();
    const report = await submitTo(queue, sweep, root);
    expect(report).toMatchObject({ planned: 12, done: 5, enqueued: 7 });
    expect(queue.job(sweep.hash, jobs[0]?.key ?? '')).toBeUndefined();
    expect(queue.job(sweep.hash, jobs[5]?.key ?? '')?.state).toBe('waiting');
  });

  it('reports what each of two simultaneous submits really added, in small chunks', async () => {
    const queue = new MemoryQueue();
    const done = new Set<string>();
    const [a, b] = await Promise.all([
      enqueueMissing(queue, sweep, done, { chunkSize: 2 }),
      enqueueMissing(queue, sweep, done, { chunkSize: 3 }),
    ]);
    expect((a?.enqueued ?? 0) + (b?.enqueued ?? 0)).toBe(12);
    expect((a?.enqueued ?? 0) + (a?.inQueue ?? 0)).toBe(12);
    expect(queue.all()).toHaveLength(12);
  });
});

describe('requeue against a queue', () => {
  it('leaves failed jobs alone unless asked, then gives them a fresh set of attempts', async () => {
    const queue = new MemoryQueue();
    await enqueueMissing(queue, sweep, new Set());
    const broken = jobs[0] as PlannedJob;
    await serve(queue, (data) =>
      jobOf(data).key === broken.key
        ? { kind: 'failed', reason: 'exception: boom', retry: true }
        : { kind: 'done', value: recordOf(jobOf(data)) },
    );
    const failedJob = queue.job(sweep.hash, broken.key);
    expect(failedJob?.state).toBe('failed');
    expect(failedJob?.attemptsMade).toBe(JOB_ATTEMPTS);

    const store = ResultStore.at(root, sweep.spec.name);
    await store.prepare(sweep);
    const plain = await requeueIn(queue, store, sweep, false, undefined);
    expect(plain).toMatchObject({ planned: 12, done: 0, inQueue: 11, failedKept: 1, retried: 0, enqueued: 0 });
    const retried = await requeueIn(queue, store, sweep, true, undefined);
    expect(retried).toMatchObject({ inQueue: 11, failedKept: 0, retried: 1, enqueued: 0 });
    expect(queue.job(sweep.hash, broken.key)).toMatchObject({ state: 'waiting', attemptsMade: 0 });
  });
});

describe('gather against a queue', () => {
  it('copies the records of finished jobs to disk, frees them, rejects return values that are not records of this sweep, and copies nothing twice', async () => {
    const queue = new MemoryQueue();
    await enqueueMissing(queue, sweep, new Set());
    const forged = jobs[1] as PlannedJob;
    await serve(queue, (data) => {
      const job = jobOf(data);
      // One job returns a record that claims another key: not a record of this job.
      const value = job.key === forged.key ? { ...recordOf(job), key: jobs[2]?.key } : recordOf(job);
      return { kind: 'done', value };
    });
    const store = ResultStore.at(root, sweep.spec.name);
    await store.prepare(sweep);
    const first = await gatherFrom(queue, store, sweep, undefined);
    expect(first).toMatchObject({ found: 12, copied: 11, alreadyOnDisk: 0, rejected: 1, removed: 11 });
    const onDisk = await store.completedKeys();
    expect(onDisk.size).toBe(11);
    expect(onDisk.has(forged.key)).toBe(false);
    // The rejected one stays in the queue for a person to look at.
    expect(queue.job(sweep.hash, forged.key)?.state).toBe('completed');
    const again = await gatherFrom(queue, store, sweep, undefined);
    expect(again).toMatchObject({ found: 1, copied: 0, rejected: 1, removed: 0 });
  });
});

describe('cancel against a queue', () => {
  it('removes waiting jobs, leaves running ones to finish, and requeue puts the removed ones back', async () => {
    const queue = new MemoryQueue();
    await enqueueMissing(queue, sweep, new Set());
    // Two jobs are held running until released.
    let release: () => void = () => undefined;
    const held = new Promise<void>((resolve) => {
      release = resolve;
    });
    const consumer = queue.consume(
      async (job) => {
        await held;
        return { kind: 'done', value: recordOf(jobOf(job.data)) };
      },
      { concurrency: 2 },
    );
    await consumer.start();
    const cancelled = await cancelIn(queue, sweep, undefined);
    expect(cancelled).toEqual({ name: 'memory-sweep', removed: 10, active: 2 });
    release();
    await consumer.close();
    expect((await queue.counts(sweep.hash)).waiting).toBe(0);
    const finished = queue.all().filter((j) => j.state === 'completed');
    expect(finished).toHaveLength(2);

    const store = ResultStore.at(root, sweep.spec.name);
    await store.prepare(sweep);
    const requeued = await requeueIn(queue, store, sweep, false, undefined);
    expect(requeued).toMatchObject({ enqueued: 10, inQueue: 2 });
  });
});

describe('progress against a queue', () => {
  it('counts finished jobs held only in the queue, and the waiting ones', async () => {
    const queue = new MemoryQueue();
    await enqueueMissing(queue, sweep, new Set());
    const consumer = queue.consume(async (job) => ({ kind: 'done', value: recordOf(jobOf(job.data)) }), {
      concurrency: 1,
    });
    await consumer.start();
    await waitFor(
      'five finished jobs',
      async () => (queue.all().filter((j) => j.state === 'completed').length >= 5 ? true : undefined),
      5_000,
      1,
    );
    consumer.concurrency = 0;
    await consumer.close();
    const store = ResultStore.at(root, sweep.spec.name);
    await store.prepare(sweep);
    const snapshot = await sweepProgress(store, sweep, queue);
    const completed = queue.all().filter((j) => j.state === 'completed').length;
    expect(snapshot.onDisk).toBe(0);
    expect(snapshot.finished).toBe(completed);
    expect(snapshot.queue).toEqual({
      waiting: 12 - completed,
      active: 0,
      delayed: 0,
      failed: 0,
      finishedNotGathered: completed,
    });
  });
});
