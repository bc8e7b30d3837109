import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { deflateRawSync } from 'node:zlib';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { packBatch, unpackBatch } from '../../shared/queue/batch-payload.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { JobRunner } from '../../worker/job-runner.js';
import { ShardSinks } from '../../worker/shard-sinks.js';
import { ThreadPool } from '../../worker/thread-pool.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op is a test model (test/fixtures/models), not built in.
await useTestModels();

// How a worker feeds the trials of the batches it holds to its threads, and what it refuses to unpack.

const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);
const TEXT = 'name: feed\nmodel: no-op\nseed: 4\nreplicates: 40\nvary:\n  value: { list: [1, 2] }\n';

let root = '';
beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-batch-feed-'));
});
afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('batches held by one worker', () => {
  it('run oldest first: every trial of the batch taken first ends before any trial of the next', async () => {
    const sweep = parseSweepText(TEXT, 'feed.yaml');
    const payloads = [...expandJobs(sweep)].map((job) => toPayload(sweep, job));
    // Two batches of 40 trials (4 x 10 replicates of value 1, then of value 2, in sweep order).
    const first = payloads.slice(0, 40);
    const second = payloads.slice(40);
    const pool = new ThreadPool({ threads: 1, context: { writer: 'feed-writer', run: 'r1' }, entry: ENTRY });
    const sinks = new ShardSinks({ root, writer: 'feed-writer', durability: 'each-job' });
    const runner = new JobRunner({ pool, sinks, run: 'r1' });
    const settled: string[] = [];
    try {
      const [a, b] = await Promise.all([
        runner.executeBatch('feed', first, 1).then((r) => {
          settled.push('first');
          return r;
        }),
        runner.executeBatch('feed', second, 1).then((r) => {
          settled.push('second');
          return r;
        }),
      ]);
      expect(a.every((r) => r.ok)).toBe(true);
      expect(b.every((r) => r.ok)).toBe(true);
      // Results come back in each batch's own order.
      expect(a.map((r) => (r.ok ? r.record.key : ''))).toEqual(first.map((p) => p.key));
      expect(b.map((r) => (r.ok ? r.record.key : ''))).toEqual(second.map((p) => p.key));
    } finally {
      sinks.close();
      await pool.close();
    }
    expect(settled).toEqual(['first', 'second']);
    // One thread writes in the order trials end: the first batch's 40, then the second's.
    const dir = join(root, 'feed', 'results');
    const [shard] = await readdir(dir);
    const keys = (await readFile(join(dir, shard as string), 'utf8'))
      .trimEnd()
      .split('\n')
      .map((line) => (JSON.parse(line) as { key: string }).key);
    expect(keys.slice(0, 40).sort()).toEqual(first.map((p) => p.key).sort());
    expect(keys.slice(40).sort()).toEqual(second.map((p) => p.key).sort());
  });
});

describe('a batch that does not unpack', () => {
  const sweep = { name: 'feed', hash: 'e'.repeat(64), rootSeed: 4 };
  const model = { id: 'no-op', version: '1' };
  const key = (n: number): string => n.toString(16).padStart(32, '0');

  /** A batch whose packed body holds `trials` in its one group, as a hostile or broken client could write it. */
  function withTrials(trials: unknown): unknown {
    const good = packBatch(sweep, model, [{ key: key(1), replicate: 0, point: { value: 1 }, params: { value: 1 } }]);
    const body = {
      model: 'no-op',
      modelVersion: '1',
      rootSeed: 4,
      groups: [{ params: { value: 1 }, point: { value: 1 }, trials }],
    };
    const count = Array.isArray(trials) ? Math.max(1, trials.length) : 1;
    return { ...good, trials: count, packed: deflateRawSync(Buffer.from(JSON.stringify(body))).toString('base64') };
  }

  it.each([
    ['a key that is not 32 hex digits', [[0, 'ABC']]],
    ['a negative replicate', [[-1, key(1)]]],
    ['a replicate that is not whole', [[0.5, key(1)]]],
    ['an entry with a third element', [[0, key(1), 'extra']]],
    ['no trials at all', []],
    ['trials that are not a list', { 0: [0, key(1)] }],
  ])('is refused whole, naming the trials of its group, for %s', (_label, trials) => {
    const unpacked = unpackBatch(withTrials(trials));
    expect(unpacked.ok).toBe(false);
    if (!unpacked.ok) expect(unpacked.message).toMatch(/^invalid batch payload: payload\.packed\.groups\.0\.trials: /);
  });

  it('is refused whole when a trial appears twice, naming its key', () => {
    const unpacked = unpackBatch(
      withTrials([
        [0, key(1)],
        [1, key(2)],
        [2, key(1)],
      ]),
    );
    expect(unpacked).toEqual({ ok: false, message: `invalid batch payload: trial ${key(1)} appears twice` });
  });

  it('gives each trial the payload it has as a job of its own, built when asked for', () => {
    const unpacked = unpackBatch(
      withTrials([
        [3, key(7)],
        [4, key(8)],
      ]),
    );
    if (!unpacked.ok) throw new Error(unpacked.message);
    expect(unpacked.trials.keys).toEqual([key(7), key(8)]);
    expect(unpacked.trials.at(1)).toMatchObject({ key: key(8), replicate: 4, params: { value: 1 }, rootSeed: 4 });
    expect(() => unpacked.trials.at(2)).toThrow(RangeError);
  });
});
