import { readdir, readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { Queue } from 'bullmq';
import { describe, expect, it } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';
import {
  childrenOf,
  inspector,
  isAlive,
  type Running,
  readNdjson,
  runCli,
  SHARED_REDIS,
  startCli,
  stopCli,
  submitJson,
  useQueueSandbox,
  waitFor,
} from './helpers.js';

// Integration: real CLI processes (built dist/) against the shared Redis on 127.0.0.1:6379.

const box = useQueueSandbox('dist');

function worker(out: string, extra: string[] = []): Running {
  const running = startCli(
    [
      'worker',
      '--redis',
      SHARED_REDIS,
      '--threads',
      '1',
      '--out',
      out,
      ...box.queue.flags,
      ...extra,
      ...TEST_MODEL_FLAGS,
    ],
    {
      RECALLSCAPE_LOG_LEVEL: 'debug',
    },
  );
  box.started.push(running);
  return running;
}

/** Parsed pino lines a worker printed so far. */
function logLines(running: Running): Array<Record<string, unknown>> {
  return running
    .output()
    .split('\n')
    .filter((l) => l.startsWith('{'))
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

async function ready(running: Running): Promise<void> {
  await waitFor(
    'a worker to be ready',
    async () => (logLines(running).some((l) => l['msg'] === 'worker ready') ? true : undefined),
    60_000,
  );
}

/** Every result record under a results root, for one sweep name. */
async function records(resultsRoot: string, name: string): Promise<Array<Record<string, unknown>>> {
  return readNdjson(join(resultsRoot, name, 'results'));
}

function byKey(list: Array<Record<string, unknown>>): Map<string, Array<Record<string, unknown>>> {
  const map = new Map<string, Array<Record<string, unknown>>>();
  for (const r of list) {
    const key = String(r['key']);
    map.set(key, [...(map.get(key) ?? []), r]);
  }
  return map;
}

/** The part of a record that a re-run of its job must reproduce exactly. */
function essence(r: Record<string, unknown>): string {
  return JSON.stringify([
    r['sweepHash'],
    r['seed'],
    r['replicate'],
    JSON.stringify(r['point']),
    JSON.stringify(r['metrics']),
  ]);
}

describe('a sweep served by worker processes through Redis', () => {
  it('gives, over two workers (one on the shared disk, one gathered through Redis), exactly the records of the embedded run', async () => {
    const file = join(box.root, 'burn.yaml');
    await writeFile(
      file,
      'name: two-workers\nmodel: cpu-burn\nseed: 11\nbatch: 1\nreplicates: 8\nfixed: { burnMs: 60 }\nvary:\n  successRate: { from: 0, to: 1, steps: 5 }\n',
    );
    const coordinatorRoot = join(box.root, 'coordinator');
    const elsewhere = join(box.root, 'other-machine');
    // Worker A writes where the coordinator reads (shared disk); worker B on a disk of its own.
    const a = worker(coordinatorRoot, ['--name', 'shared-disk']);
    const b = worker(elsewhere, ['--name', 'own-disk', '--prefetch', '2']);
    await Promise.all([ready(a), ready(b)]);

    const submitted = await submitJson(file, coordinatorRoot, box.queue);
    expect(submitted.code, submitted.stderr).toBe(0);
    const counts = JSON.parse(submitted.stdout) as Record<string, number>;
    expect(counts).toMatchObject({ planned: 40, done: 0, enqueued: 40 });

    const dir = join(coordinatorRoot, 'two-workers');
    const progressArgs = ['progress', dir, '--redis', SHARED_REDIS, '--json', ...box.queue.flags, ...TEST_MODEL_FLAGS];
    // Poll Redis directly (cheaper than a CLI process per look): finished jobs sit in the completed set.
    const client = await inspector(SHARED_REDIS);
    try {
      await waitFor(
        'all 40 jobs to finish',
        async () => ((await client.zcard(`${box.queue.prefix}:${box.queue.name}:completed`)) === 40 ? true : undefined),
        90_000,
        250,
      );
    } finally {
      client.disconnect();
    }
    // Graceful stop on SIGTERM: exit code 0.
    await stopCli(a);
    await stopCli(b);
    expect((await a.exited).code).toBe(0);
    expect((await b.exited).code).toBe(0);

    const onShared = await records(coordinatorRoot, 'two-workers');
    const onOwn = await records(elsewhere, 'two-workers');
    expect(onShared.length).toBeGreaterThan(0);
    expect(onOwn.length).toBeGreaterThan(0);

    // Before gather, progress sees worker B's jobs only in Redis.
    const before = JSON.parse((await runCli(progressArgs)).stdout) as {
      onDisk: number;
      queue: { finishedNotGathered: number };
    };
    expect(before.onDisk).toBe(new Set(onShared.map((r) => r['key'])).size);
    expect(before.queue.finishedNotGathered).toBe(40 - before.onDisk);

    const gathered = await runCli([
      'gather',
      dir,
      '--redis',
      SHARED_REDIS,
      '--json',
      ...box.queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(gathered.code, gathered.stderr).toBe(0);
    const g = JSON.parse(gathered.stdout) as Record<string, number>;
    expect(g['found']).toBe(40);
    expect(g['copied']).toBe(new Set(onOwn.map((r) => r['key'])).size);
    expect(g['removed']).toBe(40);
    // Gathering again finds nothing left in Redis and copies nothing twice.
    const again = JSON.parse(
      (await runCli(['gather', dir, '--redis', SHARED_REDIS, '--json', ...box.queue.flags, ...TEST_MODEL_FLAGS]))
        .stdout,
    ) as Record<string, number>;
    expect(again).toMatchObject({ found: 0, copied: 0 });

    // --follow on a finished sweep draws once (a plain line: stdout is a pipe here), prints the summary and ends by itself.
    const followed = await runCli([
      'progress',
      dir,
      '--follow',
      '--redis',
      SHARED_REDIS,
      ...box.queue.flags,
      ...TEST_MODEL_FLAGS,
    ]);
    expect(followed.code, followed.stderr).toBe(0);
    expect(followed.stdout).toMatch(
      /^finished 40\/40 \(100\.0%\) \| waiting 0 \| active 0 \| delayed 0 \| failed 0 \|/m,
    );
    expect(followed.stdout).toMatch(/^finished {2}40 \(100\.0%\)$/m);

    const embedded = await runCli([
      'run',
      file,
      '--out',
      join(box.root, 'embedded'),
      '--threads',
      '1',
      ...TEST_MODEL_FLAGS,
    ]);
    expect(embedded.code, embedded.stderr).toBe(0);
    const reference = byKey(await records(join(box.root, 'embedded'), 'two-workers'));
    const distributed = byKey(await records(coordinatorRoot, 'two-workers'));
    expect(reference.size).toBe(40);
    expect([...distributed.keys()].sort()).toEqual([...reference.keys()].sort());
    for (const [key, list] of distributed) {
      const expected = essence((reference.get(key) ?? [])[0] ?? {});
      for (const r of list) expect(essence(r), key).toBe(expected);
    }
    // The record a job returned is the very record on disk (same writer, same bytes of metrics).
    const ownShard = onOwn[0] as Record<string, unknown>;
    const copied = (distributed.get(String(ownShard['key'])) ?? [])[0] ?? {};
    expect(copied['writer']).toBe(ownShard['writer']);
  });

  it('hands the job of a worker killed with SIGKILL to the other worker, with one distinct record per job and nothing left running', async () => {
    const file = join(box.root, 'slow.yaml');
    // Two jobs: each worker (one thread, no prefetch) takes one, so the survivor is idle when the killed job comes back.
    await writeFile(
      file,
      'name: kill-one\nmodel: cpu-burn\nseed: 5\nbatch: 1\nreplicates: 2\nfixed: { burnMs: 2500 }\n',
    );
    const out = join(box.root, 'results');
    // The job of a dead worker comes back once its lock has expired (at most lock after the kill) and a
    // stall check ran (every stall-check), so here after about 6 + 3 = 9 s. (BullMQ marks active jobs as
    // stalling at one check and moves those whose lock is gone at the next; the worker renews every
    // lock-ms / 2.) How fast is a figure for the log, not a test: `npm run bench -- queue` times it.
    const timing = ['--lock-ms', '6000', '--stall-check-ms', '3000'];
    const victim = worker(out, ['--name', 'victim-worker', ...timing]);
    const survivor = worker(out, ['--name', 'survivor-worker', ...timing]);
    await Promise.all([ready(victim), ready(survivor)]);
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

    const jobOf = (running: Running, msg: string): string[] =>
      logLines(running)
        .filter((l) => l['msg'] === msg)
        .map((l) => String(l['job']));
    // Kill the victim while it is inside a job (started, not finished).
    const victimJob = await waitFor(
      'the victim to be inside a job',
      async () => {
        const startedIds = jobOf(victim, 'job started');
        const done = new Set(jobOf(victim, 'job done'));
        return startedIds.find((id) => !done.has(id));
      },
      60_000,
      50,
    );
    victim.child.kill('SIGKILL');
    const killedAt = Date.now();
    expect((await victim.exited).signal).toBe('SIGKILL');

    const takenOver = await waitFor(
      'the survivor to start the killed job',
      async () => logLines(survivor).find((l) => l['msg'] === 'job started' && l['job'] === victimJob),
      60_000,
      200,
    );
    console.log(`killed worker's job taken over after ${Number(takenOver['time']) - killedAt} ms`);

    await waitFor(
      'every job to have a record',
      async () => (new Set((await records(out, 'kill-one')).map((r) => r['key'])).size === 2 ? true : undefined),
      60_000,
      500,
    );
    const grouped = byKey(await records(out, 'kill-one'));
    expect(grouped.size).toBe(2);
    for (const [key, list] of grouped) expect(new Set(list.map(essence)).size, key).toBe(1);

    // Nothing of the killed worker survives: not the process, not a child, not a process with its name.
    expect(isAlive(victim.pid)).toBe(false);
    expect(await childrenOf(victim.pid)).toEqual([]);
    const leftovers: string[] = [];
    for (const entry of await readdir('/proc')) {
      if (!/^\d+$/.test(entry)) continue;
      const cmdline = await readFile(`/proc/${entry}/cmdline`, 'utf8').catch(() => '');
      if (cmdline.includes('victim-worker')) leftovers.push(entry);
    }
    expect(leftovers).toEqual([]);
  });

  it('runs a job that lasts longer than the lock duration exactly once', async () => {
    const file = join(box.root, 'long.yaml');
    await writeFile(file, 'name: long-job\nmodel: cpu-burn\nseed: 9\nfixed: { burnMs: 8000 }\n');
    const out = join(box.root, 'results');
    // An 8 s job under a 3 s lock with a stall check every 1.5 s: without renewal from a free main
    // thread the job would be taken away (and run again) after at most 4.5 s. The margins are wide
    // enough that a loaded machine delaying a renewal by a second does not fake a stall.
    const w = worker(out, ['--lock-ms', '3000', '--stall-check-ms', '1500', '--nice', '3']);
    await ready(w);
    // --nice reaches every thread of the worker, the simulation threads included (Linux keeps one nice value per thread).
    const tasks = await readdir(`/proc/${w.pid}/task`);
    expect(tasks.length).toBeGreaterThan(2);
    for (const tid of tasks) {
      const stat = await readFile(`/proc/${w.pid}/task/${tid}/stat`, 'utf8').catch(() => '');
      // Field 19 of /proc/<pid>/task/<tid>/stat is the nice value (proc(5) manual page, from memory).
      if (stat !== '') expect(Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[16]), `thread ${tid}`).toBe(3);
    }
    const submitted = await submitJson(file, out, box.queue);
    expect(submitted.code, submitted.stderr).toBe(0);
    const producer = new Queue(box.queue.name, {
      connection: { host: '127.0.0.1', port: 6379 },
      prefix: box.queue.prefix,
    });
    try {
      const [id] = await waitFor(
        'the long job to be queued',
        async () => {
          const ids = await producer.getRanges(['wait', 'active', 'completed'], 0, -1);
          return ids.length > 0 ? ids : undefined;
        },
        60_000,
        250,
      );
      // Once completed, the job cannot run again; a second run after a lost lock would have
      // finished before the job could be completed.
      await waitFor(
        'the long job to complete',
        async () => ((await producer.getJobState(id ?? '')) === 'completed' ? true : undefined),
        60_000,
        250,
      );
      const job = await producer.getJob(id ?? '');
      expect(job?.attemptsStarted).toBe(1);
      expect(job?.attemptsMade).toBe(1);
      expect(job?.stalledCounter ?? 0).toBe(0);
    } finally {
      await producer.close();
    }
    await stopCli(w);
    expect(await records(out, 'long-job')).toHaveLength(1);
    expect(logLines(w).filter((l) => l['msg'] === 'job started')).toHaveLength(1);
    expect(w.output()).not.toMatch(/lost its worker/);
  });
});
