import { closeSync, openSync, writeSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ResultStore, type StoreWarning } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const N = 200_000;

describe('result store with many records', () => {
  let root = '';
  let store: ResultStore;
  let sweep: LoadedSweep;
  let jobs: PlannedJob[] = [];

  beforeAll(async () => {
    root = await mkdtemp(join(tmpdir(), 'rs-many-'));
    // 100 values x 2,000 replicates: real keys and seeds, so the readers' identity check passes every record.
    const values = Array.from({ length: 100 }, (_, i) => i);
    sweep = parseSweepText(
      `name: many\nmodel: no-op\nreplicates: 2000\nvary:\n  value: { list: [${values.join(', ')}] }\n`,
      'many.yaml',
    );
    store = ResultStore.at(root, 'many');
    await store.prepare(sweep);
    jobs = [...expandJobs(sweep)];
    // Two shards; the second repeats the last 1,000 records of the first (identical duplicates).
    const line = (i: number): string => {
      const job = jobs[i] as PlannedJob;
      const value = job.point['value'] as number;
      return JSON.stringify({
        v: 1,
        key: job.key,
        sweepHash: sweep.hash,
        model: 'no-op',
        modelVersion: '1',
        replicate: job.replicate,
        seed: job.seed,
        point: job.point,
        metrics: { success: i % 3 === 0, value, recalled: [6, i % 7] },
        writer: 'w',
        run: 'r',
        finishedAt: '2026-01-01T00:00:00.000Z',
        elapsedMs: 1.5,
      });
    };
    const write = (file: string, from: number, to: number): void => {
      const fd = openSync(join(store.resultsDir, file), 'a');
      let chunk: string[] = [];
      for (let i = from; i < to; i++) {
        chunk.push(line(i));
        if (chunk.length === 5_000) {
          writeSync(fd, `${chunk.join('\n')}\n`);
          chunk = [];
        }
      }
      if (chunk.length > 0) writeSync(fd, `${chunk.join('\n')}\n`);
      closeSync(fd);
    };
    write('a.ndjson', 0, N);
    write('b.ndjson', N - 1_000, N);
  });

  afterAll(async () => {
    await rm(root, { recursive: true, force: true });
  });

  it('finds every one of 200,000 keys once, keeping memory bounded', async () => {
    const heapBefore = process.memoryUsage().heapUsed;
    const warnings: StoreWarning[] = [];
    const keys = await store.completedKeys({ onWarning: (w) => warnings.push(w) });
    const heapAfter = process.memoryUsage().heapUsed;
    expect(warnings).toEqual([]);
    expect(keys.size).toBe(N);
    expect(keys.has((jobs[N - 1] as PlannedJob).key)).toBe(true);
    // The files hold about 60 MB of text; a reader that kept whole records would
    // grow the heap by far more than the key set (about 20 MB). Loose bound.
    expect(heapAfter - heapBefore).toBeLessThan(150 * 1024 * 1024);
  });
});
