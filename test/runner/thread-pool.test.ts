import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import type { JobPayload } from '../../shared/schemas/records.js';
import { PoolBroken, PoolClosed, PoolTerminated } from '../../worker/pool-errors.js';
import type { JobOutcome } from '../../worker/run-job.js';
import { ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// Threads load the compiled entry from dist/ (npm test builds first).
const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);
const RUN_JOB = new URL('../../dist/worker/run-job.js', import.meta.url);
const MODEL_FOLDERS = new URL('../../dist/shared/models/external/model-folders.js', import.meta.url);
const CONTEXT = { writer: 'test-writer', run: 'test-run' };
const HASH = 'a'.repeat(64);

function burnPayload(burnMs: number, replicate: number, modelVersion = '1'): JobPayload {
  const params = { burnMs, successRate: 1 };
  const key = jobKey('cpu-burn', modelVersion, params, replicate);
  return {
    v: 1,
    sweep: { name: 'pool-test', hash: HASH },
    key,
    model: 'cpu-burn',
    modelVersion,
    params,
    point: { burnMs },
    replicate,
    seed: jobSeed(1, key),
    rootSeed: 1,
  };
}

function okRecord(outcome: JobOutcome) {
  if (!outcome.ok) throw new Error(`expected a result, got ${outcome.kind}: ${outcome.message}`);
  return outcome.record;
}

let dir = '';
let faultEntry: URL;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-pool-'));
  // A stand-in thread body speaking the pool's protocol, which dies on demand
  // so the pool's crash handling can be observed; other payloads run normally.
  const file = join(dir, 'fault-entry.mjs');
  await writeFile(
    file,
    `import { parentPort, workerData } from 'node:worker_threads';
const { runJob } = await import(${JSON.stringify(RUN_JOB.href)});
// The test models (cpu-burn) this process registered, as the real thread body loads them.
const { applyExternalModelSettings } = await import(${JSON.stringify(MODEL_FOLDERS.href)});
await applyExternalModelSettings(workerData.models);
parentPort.on('message', (req) => {
  const fault = req.payload && req.payload.fault;
  if (fault === 'throw') throw new Error('injected fault');
  if (fault === 'exit') process.exit(3);
  if (fault === 'oom') { const hog = []; for (;;) hog.push(new Array(1e6).fill(Math.random())); }
  parentPort.postMessage({ type: 'outcome', id: req.id, outcome: runJob(req.payload, workerData.context) });
});
parentPort.postMessage({ type: 'ready' });
`,
  );
  faultEntry = pathToFileURL(file);
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('ThreadPool', () => {
  it('runs jobs on two threads at the same time and returns their records', async () => {
    const pool = new ThreadPool({ threads: 2, context: CONTEXT, entry: ENTRY });
    // Two jobs at once go to the two threads; once both are back, both threads have loaded.
    await Promise.all([pool.run(burnPayload(0, 10)), pool.run(burnPayload(0, 11))]);
    const payloads = [0, 1, 2, 3].map((r) => burnPayload(200, r));
    const outcomes = await Promise.all(payloads.map((p) => pool.run(p)));
    await pool.close();
    const records = outcomes.map(okRecord);
    expect(records.map((r) => r.key)).toEqual(payloads.map((p) => p.key));
    for (const r of records) {
      expect(r.writer).toBe('test-writer');
      expect(r.run).toBe('test-run');
      expect(r.elapsedMs).toBeGreaterThanOrEqual(200);
    }
    // With two threads, the busy intervals of the first two jobs overlap in wall-clock time.
    const interval = (i: number) => {
      const r = records[i]!;
      const end = Date.parse(r.finishedAt);
      return [end - r.elapsedMs, end] as const;
    };
    const [a0, a1] = interval(0);
    const [b0, b1] = interval(1);
    expect(Math.min(a1, b1) - Math.max(a0, b0)).toBeGreaterThan(0);
  });

  it('gives a crashed outcome for a thread that throws, exits or runs out of memory, and keeps working', async () => {
    const pool = new ThreadPool({
      threads: 2,
      context: CONTEXT,
      entry: faultEntry,
      resourceLimits: { maxOldGenerationSizeMb: 48 },
    });
    const thrown = await pool.run({ fault: 'throw' });
    const exited = await pool.run({ fault: 'exit' });
    const oom = await pool.run({ fault: 'oom' });
    for (const outcome of [thrown, exited, oom]) {
      expect(outcome.ok).toBe(false);
      if (outcome.ok) continue;
      expect(outcome.kind).toBe('crashed');
      expect(outcome.retryable).toBe(true);
    }
    expect(thrown.ok === false && thrown.message).toContain('injected fault');
    expect(exited.ok === false && exited.message).toContain('code 3');
    // The replacement threads still run jobs.
    const after = await Promise.all([pool.run(burnPayload(10, 0)), pool.run(burnPayload(10, 1))]);
    expect(after.map((o) => o.ok)).toEqual([true, true]);
    await pool.close();
  });

  it('reports a payload for a model version it does not have as unsupported', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY });
    const outcome = await pool.run(burnPayload(0, 0, '999'));
    await pool.close();
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) {
      expect(outcome.kind).toBe('unsupported');
      expect(outcome.retryable).toBe(false);
    }
  });

  it('finishes queued jobs when closed and refuses new ones afterwards', async () => {
    const pool = new ThreadPool({ threads: 2, context: CONTEXT, entry: ENTRY });
    const pending = [0, 1, 2, 3, 4, 5].map((r) => pool.run(burnPayload(30, r)));
    await pool.close();
    const settled = await Promise.allSettled(pending);
    expect(settled.map((s) => s.status === 'fulfilled' && s.value.ok)).toEqual([true, true, true, true, true, true]);
    await expect(pool.run(burnPayload(0, 9))).rejects.toBeInstanceOf(PoolClosed);
  });

  it('rejects running and queued jobs with PoolTerminated when terminated', async () => {
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: ENTRY });
    // The first job goes to the thread at once (run() dispatches synchronously), the second waits.
    const running = pool.run(burnPayload(5_000, 0)).catch((e: unknown) => e);
    const queued = pool.run(burnPayload(10, 1)).catch((e: unknown) => e);
    await pool.terminate();
    expect(await running).toBeInstanceOf(PoolTerminated);
    expect(await queued).toBeInstanceOf(PoolTerminated);
    expect((await running) as Error).toMatchObject({ name: 'PoolTerminated' });
  });

  it('gives up with PoolBroken when its threads cannot start', async () => {
    const missing = pathToFileURL(join(dir, 'no-such-entry.mjs'));
    const pool = new ThreadPool({ threads: 1, context: CONTEXT, entry: missing });
    await expect(pool.run(burnPayload(0, 0))).rejects.toBeInstanceOf(PoolBroken);
    await pool.terminate();
  });
});
