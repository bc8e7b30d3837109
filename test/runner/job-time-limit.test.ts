import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  estimatedLimitMs,
  FLOOR_MS,
  jobTimeLimit,
  MAX_JOB_TIMEOUT_MS,
  PROGRAM_GRACE_MS,
} from '../../shared/job-time-limit.js';
import type { AnyModel } from '../../shared/model.js';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { findModel } from '../../shared/models/registry.js';
import type { JobPayload } from '../../shared/schemas/records.js';
import type { JobOutcome } from '../../worker/run-job.js';
import { ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';
import { testPayload } from '../fixtures/test-payload.js';

// spin (never returns), hold (returns once a file exists) and no-op are test models (test/fixtures/models).
await useTestModels();

// Threads load the compiled entry from dist/ (npm test builds first).
const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);
const CONTEXT = { writer: 'limit-writer', run: 'limit-run' };
const ROOT_SEED = 3;

const SWEEP = { name: 'limit-test', hash: 'b'.repeat(64), rootSeed: ROOT_SEED };

/** A job of a test model, with the sweep's time limit when given. */
function payload(model: string, params: Record<string, unknown>, replicate: number, timeoutMs?: number): JobPayload {
  return testPayload(SWEEP, model, params, replicate, timeoutMs);
}

/** A model object with only what jobTimeLimit reads: its cost, and for an external model its source. */
function fakeModel(cost: number, source?: Record<string, unknown>): AnyModel {
  const model: AnyModel = { ...bcpnnSequences, cost: () => cost };
  return source === undefined ? model : ({ ...model, source, runAsync: async () => ({}) } as unknown as AnyModel);
}

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-limit-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('the time limit of a job', () => {
  it('is the option over the sweep over the model, whichever are given', () => {
    const external = fakeModel(1, { kind: 'module', timeoutMs: 9_000 });
    expect(jobTimeLimit(external, {}, 5_000, 2_000)).toEqual({ ms: 2_000, source: 'option', threadMs: 2_000 });
    expect(jobTimeLimit(external, {}, 5_000, undefined)).toEqual({ ms: 5_000, source: 'sweep', threadMs: 5_000 });
    expect(jobTimeLimit(external, {}, undefined, undefined)).toEqual({ ms: 9_000, source: 'model', threadMs: 9_000 });
  });

  it("is a built-in model's cost estimate at 0.5 ns per operation times 1000, at least 60 s and at most a week", () => {
    // Worked by hand: 2e11 operations x 0.5 ns = 100 s, x 1000 = 100,000 s = 1e8 ms.
    expect(estimatedLimitMs(2e11)).toBe(1e8);
    // 1e7 operations x 0.5 ns x 1000 = 5 s: below the floor of 60 s.
    expect(estimatedLimitMs(1e7)).toBe(60_000);
    // 1e20 operations would be 1.6 years: capped at one week (7 x 24 x 3600 x 1000 ms).
    expect(estimatedLimitMs(1e20)).toBe(604_800_000);
    expect(MAX_JOB_TIMEOUT_MS).toBe(604_800_000);
    // No usable estimate: the floor.
    expect(estimatedLimitMs(Number.NaN)).toBe(FLOOR_MS);
    expect(estimatedLimitMs(-5)).toBe(FLOOR_MS);
    expect(jobTimeLimit(fakeModel(2e11), {}, undefined, undefined)).toEqual({
      ms: 1e8,
      source: 'estimate',
      threadMs: 1e8,
    });
  });

  it('gives a demo-sized bcpnn-sequences job the floor of 60 s, far above what it takes', () => {
    // The demo's shape (examples/demo.yaml): 10 hypercolumns x 20 minicolumns, sequences of 6.
    const params = bcpnnSequences.params.parse({ hypercolumns: 10, minicolumns: 20, sequenceLength: 6 });
    expect(jobTimeLimit(bcpnnSequences, params, undefined, undefined)).toEqual({
      ms: 60_000,
      source: 'estimate',
      threadMs: 60_000,
    });
  });

  it("lets the pool stop a program model's thread only after the program's own limit, its start-up time and a grace", () => {
    const program = fakeModel(1, { kind: 'program', timeoutMs: 5_000, startupMs: 60_000 });
    // 5,000 + 60,000 + 10,000 ms (worked by hand).
    expect(PROGRAM_GRACE_MS).toBe(10_000);
    expect(jobTimeLimit(program, {}, undefined, undefined)).toEqual({ ms: 5_000, source: 'model', threadMs: 75_000 });
  });
});

describe('a thread pool stopping a job at its time limit', () => {
  it('fails the job as timeout, replaces its thread, and lets the job on the other thread finish', async () => {
    expect(findModel('spin')).toBeDefined();
    const release = join(dir, 'release-1');
    const pool = new ThreadPool({ threads: 2, context: CONTEXT, entry: ENTRY });
    try {
      let holdSettled = false;
      const held = pool.run(payload('hold', { release }, 0)).then((outcome) => {
        holdSettled = true;
        return outcome;
      });
      const spun = await pool.run(payload('spin', { forever: true, label: 1 }, 0, 300));
      expect(spun.ok).toBe(false);
      const failure = spun as Extract<JobOutcome, { ok: false }>;
      expect(failure.kind).toBe('timeout');
      expect(failure.retryable).toBe(false);
      expect(failure.message).toBe(
        "the job ran over its time limit of 300 ms (the sweep's jobTimeoutMs); its thread was stopped and replaced",
      );
      expect(failure.payload?.model).toBe('spin');
      // The hold job waits for a file nobody has written yet: still running, on the other thread.
      expect(holdSettled).toBe(false);
      expect(pool.liveThreads).toBe(2);
      expect(pool.timeouts).toBe(1);
      await writeFile(release, '');
      const holdOutcome = await held;
      expect(holdOutcome.ok).toBe(true);
      // The replacement thread serves: two more jobs at once need both threads.
      const after = await Promise.all([
        pool.run(payload('no-op', { value: 7 }, 1)),
        pool.run(payload('spin', { forever: false, label: 2 }, 1)),
      ]);
      expect(after.map((o) => o.ok)).toEqual([true, true]);
      expect(pool.liveThreads).toBe(2);
    } finally {
      await pool.close();
    }
  });

  it("uses the pool's own limit (--model-timeout) over the sweep's", async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY, jobTimeoutMs: 250 });
    try {
      // The sweep asks for ten minutes; the process's option wins.
      const spun = await pool.run(payload('spin', { forever: true, label: 3 }, 2, 600_000));
      expect(spun.ok).toBe(false);
      expect((spun as Extract<JobOutcome, { ok: false }>).kind).toBe('timeout');
      expect((spun as Extract<JobOutcome, { ok: false }>).message).toBe(
        'the job ran over its time limit of 250 ms (set by --model-timeout); its thread was stopped and replaced',
      );
      // The one replacement thread runs the next job.
      const next = await pool.run(payload('no-op', { value: 1 }, 2));
      expect(next.ok).toBe(true);
      expect(pool.liveThreads).toBe(1);
    } finally {
      await pool.close();
    }
  });

  it('lets close() end a pool whose job never returns, by its time limit', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY });
    const spun = pool.run(payload('spin', { forever: true, label: 4 }, 3, 200));
    await pool.close();
    const outcome = await spun;
    expect(outcome.ok).toBe(false);
    expect((outcome as Extract<JobOutcome, { ok: false }>).kind).toBe('timeout');
    // After close() no thread is left, the replacement started while closing included.
    expect(pool.liveThreads).toBe(0);
  });
});
