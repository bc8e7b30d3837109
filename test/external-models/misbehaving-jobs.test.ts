import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { expandJobs } from '../../shared/sweep/expand.js';
import {
  deleteKeys,
  type Running,
  readNdjson,
  runCli as runQueueCli,
  SHARED_REDIS,
  startCli,
  stopCli,
  uniqueQueue,
  waitFor,
} from '../queue/helpers.js';
import { FIXTURES, modelEnv, ROOT, removeDir, runCliIn, tempDir } from './helpers.js';

// The misbehaving fixture program (fixtures/misbehave) through the real
// command line: a hung model, a crashing one, one printing garbage and one
// replying with metrics of the wrong types, next to jobs that work.

const SWEEP = (name: string) => `name: ${name}
model: misbehave
seed: 4
replicates: 2
vary:
  mode: { list: [ok, hang, crash, garbage, wrong-types] }
  value: { list: [1] }
`;

/** Kind and a piece of the message each failing mode must give. */
const EXPECTED: Record<string, { kind: string; message: RegExp }> = {
  hang: { kind: 'timeout', message: /no reply within the time limit of 3000 ms[\s\S]*going to sleep forever/ },
  crash: { kind: 'crashed', message: /exited with code 3 before it replied[\s\S]*about to crash on purpose/ },
  garbage: { kind: 'exception', message: /the reply is not JSON: "this is not json"[\s\S]*printing garbage/ },
  'wrong-types': { kind: 'exception', message: /wrong metrics: metric "ok" must be true or false, got "yes"/ },
};

let base = '';
beforeAll(async () => {
  base = await tempDir('misbehaving');
});
afterAll(async () => {
  await removeDir(base);
});

/** The planned keys of a sweep text, by mode, computed with the project's own expansion (as run does). */
async function plannedKeys(name: string): Promise<Map<string, string>> {
  const { registerModelFolders } = await import('../../shared/models/external/model-folders.js');
  const { parseSweepText } = await import('../../shared/sweep/load.js');
  await registerModelFolders([FIXTURES]);
  const byKey = new Map<string, string>();
  for (const job of expandJobs(parseSweepText(SWEEP(name), 'inline'))) byKey.set(job.key, String(job.point['mode']));
  return byKey;
}

describe('misbehaving program models', () => {
  it('in an embedded run: each bad job ends as a failure record of its kind, the good ones as results, nothing lost', async () => {
    const file = join(base, 'embedded.yaml');
    await writeFile(file, SWEEP('misbehaving'));
    const out = join(base, 'out');
    const run = await runCliIn(
      ['run', file, '--models', FIXTURES, '--model-timeout', '3000', '--threads', '2', '--out', out],
      ROOT,
    );
    // Some jobs failed: exit code 1, and the summary says how many.
    expect(run.code).toBe(1);
    expect(run.stdout).toMatch(/10 jobs planned, 0 had results before this run, 10 ran now \(8 with errors\)/);
    const planned = await plannedKeys('misbehaving');
    const results = await readNdjson(join(out, 'misbehaving', 'results'));
    const failures = await readNdjson(join(out, 'misbehaving', 'failures'));
    expect(results.map((r) => planned.get(String(r['key'])))).toEqual(['ok', 'ok']);
    expect(failures).toHaveLength(8);
    for (const failure of failures) {
      const mode = planned.get(String(failure['key'])) as string;
      const expected = EXPECTED[mode];
      expect(expected, `a failure of mode ${mode}`).toBeDefined();
      expect(failure['kind'], mode).toBe(expected?.kind);
      expect(failure['message'], mode).toMatch(expected?.message as RegExp);
    }
    // Nothing lost: every planned job has a result or a failure record.
    const seen = new Set([...results, ...failures].map((r) => String(r['key'])));
    expect([...planned.keys()].every((key) => seen.has(key))).toBe(true);
  });

  describe('in a queue worker', () => {
    const queue = uniqueQueue();
    let worker: Running | undefined;
    afterAll(async () => {
      if (worker !== undefined) await stopCli(worker, 10_000);
      await deleteKeys(SHARED_REDIS, queue.prefix);
    });

    it('records each bad job with its kind and keeps serving jobs after them', async () => {
      const out = join(base, 'queue-out');
      const env = modelEnv();
      worker = startCli(
        [
          'worker',
          '--redis',
          SHARED_REDIS,
          ...queue.flags,
          '--models',
          FIXTURES,
          '--model-timeout',
          '3000',
          '--threads',
          '2',
          '--out',
          out,
        ],
        env,
      );
      const file = join(base, 'queued.yaml');
      await writeFile(file, SWEEP('misbehaving-queued'));
      const submit = await runQueueCli(
        ['submit', file, '--redis', SHARED_REDIS, ...queue.flags, '--models', FIXTURES, '--out', out],
        { env },
      );
      expect(submit.code).toBe(0);
      const planned = await plannedKeys('misbehaving-queued');
      const folder = join(out, 'misbehaving-queued');
      // First attempts of all 8 bad jobs recorded, the 2 good jobs done.
      await waitFor(
        'every job to have run once',
        async () => {
          const failures = await readNdjson(join(folder, 'failures'));
          const firstTries = new Set(failures.filter((f) => f['attempt'] === 1).map((f) => f['key']));
          const results = await readNdjson(join(folder, 'results'));
          return firstTries.size === 8 && results.length === 2 ? true : undefined;
        },
        180_000,
        250,
      );
      for (const failure of await readNdjson(join(folder, 'failures'))) {
        const mode = planned.get(String(failure['key'])) as string;
        expect(failure['kind'], mode).toBe(EXPECTED[mode]?.kind);
        expect(failure['message'], mode).toMatch(EXPECTED[mode]?.message as RegExp);
      }
      // The worker still serves: a new sweep of good jobs finishes.
      const after = join(base, 'after.yaml');
      await writeFile(after, 'name: after-misbehaving\nmodel: misbehave\nvary:\n  value: { list: [5, 6, 7] }\n');
      const second = await runQueueCli(
        ['submit', after, '--redis', SHARED_REDIS, ...queue.flags, '--models', FIXTURES, '--out', out],
        { env },
      );
      expect(second.code).toBe(0);
      const done = await waitFor(
        'the good jobs submitted after the bad ones',
        async () => {
          const records = await readNdjson(join(out, 'after-misbehaving', 'results'));
          return records.length === 3 ? records : undefined;
        },
        120_000,
        250,
      );
      expect(done.map((r) => (r['metrics'] as Record<string, unknown>)['value']).sort()).toEqual([5, 6, 7]);
      expect(worker.child.exitCode).toBeNull();
    });
  });
});
