import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { type FinishEvent, finishSweep } from '../../coordinator/finish-sweep.js';
import { submitTo } from '../../coordinator/submit-sweep.js';
import { ServiceError } from '../../shared/errors.js';
import { JOB_ATTEMPTS } from '../../shared/queue/job-policy.js';
import { MemoryQueue } from '../../shared/queue/memory/memory-queue.js';
import type { JobVerdict } from '../../shared/queue/work-consumer.js';
import type { WorkQueue } from '../../shared/queue/work-queue.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob, toPayload } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { runJob } from '../../worker/run-job.js';

// The follow-to-the-end loop against the in-memory queue: the test plays the workers and the
// accidents (a queue that loses jobs, Redis that goes away) at chosen looks, so no timing is involved.

// A tiny network of the real model: a few milliseconds per trial.
const TEXT = `name: finish-memory
model: bcpnn-sequences
seed: 3
replicates: 3
# One trial per queue job: the fake worker below reads single-job payloads.
batch: 1
fixed: { hypercolumns: 4, minicolumns: 4, sequenceLength: 3, recallDuration: 200 }
vary:
  patternOverlap: { list: [0, 0.25, 0.5, 0.75] }
`;
const PLANNED = 12; // 4 points x 3 replicates, as the sweep text says

let root = '';
let sweep: LoadedSweep;
let jobs: PlannedJob[];
let store: ResultStore;

beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-finish-'));
  sweep = parseSweepText(TEXT, 'finish.yaml');
  jobs = [...expandJobs(sweep)];
  store = ResultStore.at(root, sweep.spec.name);
});

afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

function jobOf(data: unknown): PlannedJob {
  const key = (data as { key: string }).key;
  const job = jobs.find((j) => j.key === key);
  if (job === undefined) throw new Error(`no job ${key}`);
  return job;
}

/** What a worker of ours returns for a job: its record, run for real. */
function recordVerdict(data: unknown): JobVerdict {
  const outcome = runJob(toPayload(sweep, jobOf(data)), { writer: 'memory-worker', run: 'r1' });
  if (!outcome.ok) throw new Error(`${outcome.kind}: ${outcome.message}`);
  return { kind: 'done', value: outcome.record };
}

/** Play a worker for up to `n` waiting jobs, synchronously (take and settle as a consumer does). */
function serve(queue: MemoryQueue, n: number, verdict: (data: unknown) => JobVerdict = recordVerdict): number {
  let served = 0;
  while (served < n) {
    const job = queue.take();
    if (job === undefined) break;
    queue.settle(job, verdict(job.data));
    served++;
  }
  return served;
}

/** Every record line in the folder's result shards. */
async function recordLines(): Promise<Array<{ key: string }>> {
  const dir = join(store.dir, 'results');
  const lines: Array<{ key: string }> = [];
  for (const name of await readdir(dir).catch(() => [] as string[])) {
    for (const line of (await readFile(join(dir, name), 'utf8')).split('\n')) {
      if (line.trim() !== '') lines.push(JSON.parse(line) as { key: string });
    }
  }
  return lines;
}

/** Counts the looks (progress events) and runs the test's action for each. */
function onLooks(actions: Record<number, () => void>, events: FinishEvent[] = []): (e: FinishEvent) => void {
  let looks = 0;
  return (e) => {
    events.push(e);
    if (e.kind !== 'progress') return;
    looks++;
    actions[looks]?.();
  };
}

describe('following a queued sweep to its end', () => {
  it('gathers every record, queues again the jobs the queue lost half-way, and ends complete with each job recorded once', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root);
    const events: FinishEvent[] = [];
    const result = await finishSweep({
      store,
      sweep,
      openQueue: async () => queue,
      retryFailed: false,
      intervalMs: 1,
      redisPatienceMs: 60_000,
      onEvent: onLooks(
        {
          // A worker finishes 4 jobs; their records are only in the queue.
          1: () => serve(queue, 4),
          // The queue loses every waiting job (as a flushed Redis would).
          2: () => void queue.cancel(sweep.hash),
          // Workers serve whatever is queued.
          3: () => serve(queue, PLANNED),
        },
        events,
      ),
    });
    expect(result.end).toBe('complete');
    expect(result.missing.total).toBe(0);
    // 12 planned - 4 finished before the loss = 8 lost and queued again.
    expect(result.queued).toBe(8);
    expect(events.filter((e) => e.kind === 'queued' && !e.first).map((e) => e.kind === 'queued' && e.queued)).toEqual([
      8,
    ]);
    expect(result.gathered).toBe(PLANNED);
    const lines = await recordLines();
    expect(lines).toHaveLength(PLANNED);
    expect(new Set(lines.map((l) => l.key))).toEqual(new Set(jobs.map((j) => j.key)));
    // Records gathered over several looks go to one shard file, not one per look.
    expect(await readdir(join(store.dir, 'results'))).toHaveLength(1);
    // Redis keeps nothing of a finished sweep.
    expect(queue.all().filter((j) => j.sweepHash === sweep.hash)).toEqual([]);
  });

  it('ends as stuck, naming the failed jobs, when only jobs that failed permanently are left, and a second follow with retryFailed finishes them', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root);
    const broken = new Set(jobs.slice(0, 2).map((j) => j.key));
    const failing = (data: unknown): JobVerdict =>
      broken.has(jobOf(data).key) ? { kind: 'failed', reason: 'invalid: refused', retry: false } : recordVerdict(data);
    serve(queue, PLANNED, failing);
    const stuck = await finishSweep({
      store,
      sweep,
      openQueue: async () => queue,
      retryFailed: false,
      intervalMs: 1,
      redisPatienceMs: 60_000,
    });
    expect(stuck.end).toBe('stuck');
    expect(stuck.missing).toMatchObject({ total: 2, failed: 2, waiting: 0, running: 0, nowhere: 0 });
    expect(stuck.queued).toBe(0);

    const again = await finishSweep({
      store,
      sweep,
      openQueue: async () => queue,
      retryFailed: true,
      intervalMs: 1,
      redisPatienceMs: 60_000,
      onEvent: onLooks({ 1: () => serve(queue, PLANNED) }),
    });
    expect(again).toMatchObject({ end: 'complete', retried: 2, queued: 0 });
    expect(new Set((await recordLines()).map((l) => l.key)).size).toBe(PLANNED);
  });

  it('does not give up on a job that is still retrying', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root);
    let attempts = 0;
    const flaky = jobs[0]?.key;
    const verdict = (data: unknown): JobVerdict =>
      jobOf(data).key === flaky && ++attempts < JOB_ATTEMPTS
        ? { kind: 'failed', reason: 'exception: flaky', retry: true }
        : recordVerdict(data);
    const result = await finishSweep({
      store,
      sweep,
      openQueue: async () => queue,
      retryFailed: false,
      intervalMs: 1,
      redisPatienceMs: 60_000,
      // One job served per look: the flaky one goes back to waiting three times before it succeeds.
      onEvent: onLooks(
        Object.fromEntries(Array.from({ length: 40 }, (_, i) => [i + 1, () => serve(queue, 1, verdict)])),
      ),
    });
    expect(result.end).toBe('complete');
    expect(attempts).toBe(JOB_ATTEMPTS);
  });

  it('stops at the deadline with every job still waiting and says so', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root);
    let clock = 1_000_000;
    const result = await finishSweep({
      store,
      sweep,
      openQueue: async () => queue,
      retryFailed: false,
      intervalMs: 1,
      redisPatienceMs: 60_000,
      deadline: 1_000_000 + 5_000,
      // Each reading of the clock moves it on by a second: the deadline comes after a few looks.
      now: () => (clock += 1_000),
      pause: async () => undefined,
    });
    expect(result.end).toBe('deadline');
    expect(result.missing).toMatchObject({ total: PLANNED, waiting: PLANNED, failed: 0 });
  });

  it('stops when asked between two looks, leaving the queue as it was', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root);
    const stop = new AbortController();
    const result = await finishSweep({
      store,
      sweep,
      openQueue: async () => queue,
      retryFailed: false,
      intervalMs: 60_000,
      redisPatienceMs: 60_000,
      signal: stop.signal,
      onEvent: onLooks({ 1: () => stop.abort() }),
    });
    expect(result.end).toBe('stopped');
    expect((await queue.counts(sweep.hash)).waiting).toBe(PLANNED);
  });

  it('rides out a Redis that went away and came back empty: it reopens the queue and queues every job without a record again', async () => {
    const before = new MemoryQueue();
    await submitTo(before, sweep, root);
    const after = new MemoryQueue();
    let broken = false;
    // The first queue answers until Redis "restarts"; then every call fails as a dropped connection does.
    const failing = new Proxy(before, {
      get(target, prop, receiver) {
        const value = Reflect.get(target, prop, receiver) as unknown;
        if (typeof value !== 'function' || prop === 'close') return value;
        return (...args: unknown[]) => {
          if (broken) throw new ServiceError('lost the connection to Redis');
          return (value as (...a: unknown[]) => unknown).apply(target, args);
        };
      },
    }) as WorkQueue;
    let opened = 0;
    const events: FinishEvent[] = [];
    const result = await finishSweep({
      store,
      sweep,
      openQueue: async () => (++opened === 1 ? failing : after),
      retryFailed: false,
      intervalMs: 1,
      redisPatienceMs: 60_000,
      onEvent: (e) => {
        events.push(e);
        if (e.kind !== 'progress') return;
        if (opened === 1 && !broken) {
          // 5 records reach the disk through the first queue, then Redis goes.
          serve(before, 5);
          if (e.snapshot.onDisk === 5) broken = true;
        } else if (opened === 2) {
          serve(after, PLANNED);
        }
      },
    });
    expect(result.end).toBe('complete');
    expect(events.some((e) => e.kind === 'redis-trouble')).toBe(true);
    expect(events.some((e) => e.kind === 'redis-back')).toBe(true);
    // The empty queue got exactly the jobs without a record.
    expect(result.queued).toBe(PLANNED - 5);
    expect((await recordLines()).length).toBe(PLANNED);
  });

  it('gives up when Redis stays away longer than the patience, with what the files say', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root);
    let clock = 0;
    let opened = 0;
    const result = await finishSweep({
      store,
      sweep,
      openQueue: async () => {
        if (++opened === 1) {
          // The first open works, but the queue fails at once.
          return {
            ...queue,
            finishedJobs: () => {
              throw new ServiceError('cannot reach Redis at redis://127.0.0.1:1 (ECONNREFUSED)');
            },
            close: async () => undefined,
          } as unknown as WorkQueue;
        }
        throw new ServiceError('cannot reach Redis at redis://127.0.0.1:1 (ECONNREFUSED)');
      },
      retryFailed: false,
      intervalMs: 1,
      redisPatienceMs: 10_000,
      now: () => (clock += 1_000),
      pause: async () => undefined,
    });
    expect(result.end).toBe('unreachable');
    expect(result.redisMessage).toMatch(/ECONNREFUSED/);
    expect(result.missing).toMatchObject({ total: PLANNED, queueUnknown: true });
  });
});
