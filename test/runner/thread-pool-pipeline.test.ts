import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { JobPayload } from '../../shared/schemas/records.js';
import { PoolClosed } from '../../worker/pool-errors.js';
import type { JobOutcome } from '../../worker/run-job.js';
import { SHORT_JOB_DEPTH, SHORT_JOB_MS, ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';
import { testPayload } from '../fixtures/test-payload.js';

// hold (returns once a file exists), spin (never returns) and no-op are test models (test/fixtures/models).
await useTestModels();

// Threads load the compiled entry from dist/ (npm test builds first).
const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);
const CONTEXT = { writer: 'pipe-writer', run: 'pipe-run' };
const ROOT_SEED = 5;

const SWEEP = { name: 'pipeline-test', hash: 'c'.repeat(64), rootSeed: ROOT_SEED };

/** A job of a test model, with the sweep's time limit when given. */
function payload(model: string, params: Record<string, unknown>, replicate: number, timeoutMs?: number): JobPayload {
  return testPayload(SWEEP, model, params, replicate, timeoutMs);
}

const settle = (p: Promise<JobOutcome>): Promise<JobOutcome | Error> => p.catch((e: unknown) => e as Error);

let dir = '';
let throwingEntry: URL;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-pipe-'));
  // The real thread body with one more listener after its own: a payload
  // with \`fault: 'throw'\` makes the thread die of an uncaught exception as
  // that message is read, before the job's outcome is posted. (Added after
  // the body's listener: a listener attached earlier would start the port
  // and take messages the body is not yet listening for.)
  const file = join(dir, 'throwing-entry.mjs');
  await writeFile(
    file,
    `import { parentPort } from 'node:worker_threads';
await import(${JSON.stringify(ENTRY.href)});
parentPort.on('message', (req) => {
  if (req.payload && req.payload.fault === 'throw') throw new Error('injected fault');
});
`,
  );
  throwingEntry = pathToFileURL(file);
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('a thread pool handing each thread its next job while one runs', () => {
  it('takes back a job waiting inside a thread when asked, never starting it, while the running one finishes', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY, pipeline: 2 });
    try {
      // A first job makes the thread ready: only a ready thread takes a second job.
      expect((await pool.run(payload('no-op', { value: 1 }, 0))).ok).toBe(true);
      const release = join(dir, 'release-withdraw');
      const running = settle(pool.run(payload('hold', { release }, 0)));
      // Behind the running job, inside the thread (the pool holds more while jobs are short) or in the queue.
      const behind = [2, 3, 4].map((value) => settle(pool.run(payload('no-op', { value }, 0))));
      pool.withdrawQueued();
      await writeFile(release, '');
      const held = await running;
      expect(held).toMatchObject({ ok: true });
      for (const waited of await Promise.all(behind)) {
        expect(waited).toBeInstanceOf(PoolClosed);
        expect((waited as Error).message).toBe('taken back before it started');
      }
      // Jobs handed over after the withdrawal run as usual.
      const later = await pool.run(payload('no-op', { value: 5 }, 0));
      expect(later).toMatchObject({ ok: true, record: { point: {} } });
    } finally {
      await pool.close();
    }
  });

  it('holds two jobs per thread at first and SHORT_JOB_DEPTH once the moving mean of job time is under SHORT_JOB_MS', async () => {
    const pool = new ThreadPool({ threads: 2, context: CONTEXT, entry: ENTRY, pipeline: 2 });
    try {
      expect(pool.depth).toBe(2);
      expect(pool.appetite).toBe(2 * 3);
      // One job at a time, so the mean follows the records' own elapsedMs in order: the documented
      // rule (new mean = 0.9 old + 0.1 this job), worked here from the outside. A first job in a
      // fresh thread can take milliseconds (loading, compiling); no-op jobs after it take microseconds.
      let mean: number | undefined;
      for (let value = 1; value <= 200 && (mean === undefined || mean >= SHORT_JOB_MS); value++) {
        const outcome = await pool.run(payload('no-op', { value }, 3));
        if (!outcome.ok) throw new Error(`no-op job failed: ${outcome.message}`);
        const ms = outcome.record.elapsedMs;
        mean = mean === undefined ? ms : 0.9 * mean + 0.1 * ms;
      }
      expect(mean).toBeLessThan(SHORT_JOB_MS);
      expect(pool.depth).toBe(SHORT_JOB_DEPTH);
      expect(pool.appetite).toBe(2 * (SHORT_JOB_DEPTH + 1));
    } finally {
      await pool.close();
    }
  });

  it('blames only the job whose message killed the thread: the one before it keeps its result', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: throwingEntry, pipeline: 2 });
    try {
      expect((await pool.run(payload('no-op', { value: 1 }, 0))).ok).toBe(true);
      const release = join(dir, 'release-blame');
      const first = pool.run(payload('hold', { release }, 1));
      // Waits in the thread behind the hold job; read (and fatal) only after that one posted its outcome.
      const fatal = pool.run({ ...payload('no-op', { value: 2 }, 1), fault: 'throw' } as JobPayload);
      await writeFile(release, '');
      expect(await first).toMatchObject({ ok: true });
      const crashed = await fatal;
      expect(crashed).toMatchObject({ ok: false, kind: 'crashed', retryable: true });
      expect(crashed.ok === false && crashed.message).toContain('injected fault');
    } finally {
      await pool.close();
    }
  });

  it('runs a job that waited behind a crashed one on the replacement thread', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: throwingEntry, pipeline: 2 });
    try {
      expect((await pool.run(payload('no-op', { value: 1 }, 0))).ok).toBe(true);
      const fatal = pool.run({ ...payload('no-op', { value: 5 }, 2), fault: 'throw' } as JobPayload);
      const behind = pool.run(payload('no-op', { value: 6 }, 2));
      expect(await fatal).toMatchObject({ ok: false, kind: 'crashed' });
      expect(await behind).toMatchObject({ ok: true });
      expect(pool.liveThreads).toBe(1);
    } finally {
      await pool.close();
    }
  });

  it('runs a job that waited behind one stopped at its time limit, and counts one timeout', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY, pipeline: 2 });
    try {
      expect((await pool.run(payload('no-op', { value: 1 }, 0))).ok).toBe(true);
      const spun = pool.run(payload('spin', { forever: true, label: 1 }, 0, 300));
      const behind = pool.run(payload('spin', { forever: false, label: 2 }, 0, 300));
      expect(await spun).toMatchObject({ ok: false, kind: 'timeout', retryable: false });
      expect(await behind).toMatchObject({ ok: true, record: { metrics: { success: true, label: 2 } } });
      expect(pool.timeouts).toBe(1);
    } finally {
      await pool.close();
    }
  });

  it('refuses a pipeline depth that is not a whole number from 1 to 64', () => {
    expect(() => new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY, pipeline: 0 })).toThrow(
      'pipeline must be a whole number from 1 to 64, got 0',
    );
  });
});
