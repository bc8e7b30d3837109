import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { Queue } from 'bullmq';
import { describe, expect, it } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';
import {
  inspector,
  type Running,
  readNdjson,
  runCli,
  SHARED_REDIS,
  startCli,
  useQueueSandbox,
  waitFor,
} from './helpers.js';

// Job time limits in a real worker process (built dist/) serving the shared Redis on 127.0.0.1:6379.
// spin (test/fixtures/models) never returns when forever is true: only the limit ends those jobs.

const box = useQueueSandbox('time-limit', 10_000);

/** A worker with one thread: every job after a timeout runs on the replacement thread. */
function worker(out: string, extra: string[] = []): Running {
  const running = startCli([
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
  ]);
  box.started.push(running);
  return running;
}

/** The worker's JSON log lines so far. */
function logLines(running: Running): Array<Record<string, unknown>> {
  return running
    .output()
    .split('\n')
    .filter((l) => l.startsWith('{'))
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

/**
 * Submit with a given number of trials per queue job (one unless said): a size given is not calibrated
 * (calibrating runs trials in the submitting process, where one that never ends would never end).
 */
async function submit(out: string, name: string, text: string, batch = 1): Promise<void> {
  const file = join(box.root, `${name}.yaml`);
  await writeFile(file, text);
  const result = await runCli([
    'submit',
    file,
    '--batch',
    String(batch),
    '--redis',
    SHARED_REDIS,
    '--out',
    out,
    ...box.queue.flags,
    ...TEST_MODEL_FLAGS,
  ]);
  expect(result.code, result.stderr).toBe(0);
}

/** Waits until the sweep folder holds `results` results and `failures` failure records. */
async function records(folder: string, results: number, failures: number) {
  return waitFor(
    `${results} results and ${failures} failures in ${folder}`,
    async () => {
      const r = await readNdjson(join(folder, 'results'));
      const f = await readNdjson(join(folder, 'failures'));
      return r.length >= results && f.length >= failures ? { results: r, failures: f } : undefined;
    },
    120_000,
    250,
  );
}

/** Two jobs that never end and two that end at once. */
const SPIN = (name: string, extra = ''): string =>
  `name: ${name}\nmodel: spin\nseed: 6\nreplicates: 2\n${extra}vary:\n  forever: { list: [true, false] }\n`;

describe('a queue worker with jobs over their time limit', () => {
  it("fails them as timeout after the sweep's jobTimeoutMs, once each, and keeps serving on a replaced thread", async () => {
    const out = join(box.root, 'out');
    const running = worker(out);
    await submit(out, 'queued-limit', SPIN('queued-limit', 'jobTimeoutMs: 500\n'));
    const { results, failures } = await records(join(out, 'queued-limit'), 2, 2);
    expect(results.map((r) => r['point'])).toEqual([{ forever: false }, { forever: false }]);
    for (const failure of failures) {
      expect(failure['kind']).toBe('timeout');
      expect(failure['attempt']).toBe(1);
      expect(failure['message']).toBe(
        "the job ran over its time limit of 500 ms (the sweep's jobTimeoutMs); its thread was stopped and replaced",
      );
    }
    // Not retried: each failed job used one attempt of the four submit allows, and nothing is waiting.
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(box.queue.name, { connection: client.duplicate(), prefix: box.queue.prefix });
    try {
      const failed = await q.getFailed();
      expect(failed).toHaveLength(2);
      for (const job of failed) {
        expect(job.attemptsMade).toBe(1);
        expect(job.failedReason).toMatch(/^timeout: the job ran over its time limit of 500 ms/);
      }
      const counts = await q.getJobCounts('waiting', 'delayed', 'active');
      expect(counts).toEqual({ waiting: 0, delayed: 0, active: 0 });
    } finally {
      await q.close();
      client.disconnect();
    }
    // The worker said what happened to the thread, and its pool is back to its one thread.
    const replaced = logLines(running).filter(
      (l) => l['msg'] === 'a job ran over its time limit; its thread was stopped and replaced',
    );
    expect(replaced).toHaveLength(2);
    for (const line of replaced) {
      expect(line['threads']).toBe(1);
      expect(line['limitMs']).toBe(500);
      expect(line['limitFrom']).toBe('sweep');
    }
    // Still alive, and a sweep submitted after the timeouts finishes on the replacement thread.
    expect(running.child.exitCode).toBeNull();
    await submit(out, 'after-limit', 'name: after-limit\nmodel: no-op\nseed: 1\nreplicates: 3\n');
    const after = await records(join(out, 'after-limit'), 3, 0);
    expect(after.failures).toEqual([]);
  });

  it("carries the sweep's jobTimeoutMs in queue jobs of several trials, and fails such a job for good", async () => {
    const out = join(box.root, 'out');
    worker(out);
    // Trials in sweep order, two a job: both trials of forever=true in one job, both of forever=false in the other.
    await submit(out, 'batched-limit', SPIN('batched-limit', 'jobTimeoutMs: 450\n'), 2);
    const { results, failures } = await records(join(out, 'batched-limit'), 2, 2);
    expect(results.map((r) => r['point'])).toEqual([{ forever: false }, { forever: false }]);
    expect(failures.map((f) => [f['kind'], f['attempt'], f['message']])).toEqual([
      [
        'timeout',
        1,
        "the job ran over its time limit of 450 ms (the sweep's jobTimeoutMs); its thread was stopped and replaced",
      ],
      [
        'timeout',
        1,
        "the job ran over its time limit of 450 ms (the sweep's jobTimeoutMs); its thread was stopped and replaced",
      ],
    ]);
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(box.queue.name, { connection: client.duplicate(), prefix: box.queue.prefix });
    try {
      const failed = await waitFor('the batch to be failed', async () => {
        const jobs = await q.getFailed();
        return jobs.length === 1 ? jobs : undefined;
      });
      expect(failed[0]?.attemptsMade).toBe(1);
      expect(failed[0]?.failedReason).toMatch(/^timeout: 2 of 2 trials failed; first: the job ran over/);
    } finally {
      await q.close();
      client.disconnect();
    }
  });

  it("uses the worker's --model-timeout over the model's own limit", async () => {
    const out = join(box.root, 'out');
    worker(out, ['--model-timeout', '400']);
    // No jobTimeoutMs: without the option these jobs would run for spin's own limit, ten minutes.
    await submit(out, 'option-limit', SPIN('option-limit'));
    const { results, failures } = await records(join(out, 'option-limit'), 2, 2);
    expect(results).toHaveLength(2);
    expect(failures.map((f) => f['message'])).toEqual([
      'the job ran over its time limit of 400 ms (set by --model-timeout); its thread was stopped and replaced',
      'the job ran over its time limit of 400 ms (set by --model-timeout); its thread was stopped and replaced',
    ]);
  });
});
