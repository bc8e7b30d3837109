import { mkdir, readdir, stat } from 'node:fs/promises';
import { join, relative } from 'node:path';
import { Queue } from 'bullmq';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import { findModel } from '../../shared/models/registry.js';
import { jobIdFor } from '../../shared/queue/bullmq/job-ids.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import {
  deleteKeys,
  inspector,
  type Running,
  readNdjson,
  removeDir,
  runCli,
  SHARED_REDIS,
  startCli,
  stopCli,
  tempDir,
  uniqueQueue,
  waitFor,
} from './helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// Jobs pushed straight into the queue, bypassing submit: the worker must treat them as untrusted.

let base = '';
let resultsRoot = '';
const queue = uniqueQueue();
let worker: Running;

beforeAll(async () => {
  base = await tempDir('hostile');
  resultsRoot = join(base, 'deep', 'a', 'results');
  await mkdir(resultsRoot, { recursive: true });
  worker = startCli([
    'worker',
    '--redis',
    SHARED_REDIS,
    '--threads',
    '1',
    '--out',
    resultsRoot,
    ...queue.flags,
    ...TEST_MODEL_FLAGS,
  ]);
  await waitFor(
    'the worker to be ready',
    async () => (worker.output().includes('worker ready') ? true : undefined),
    60_000,
  );
});

afterAll(async () => {
  if (worker !== undefined) await stopCli(worker, 5_000);
  await deleteKeys(SHARED_REDIS, queue.prefix);
  await removeDir(base);
});

/** Every file below a folder, as paths relative to `base`. */
async function filesUnder(folder: string): Promise<string[]> {
  const out: string[] = [];
  for (const entry of await readdir(folder, { recursive: true })) {
    const full = join(folder, entry);
    if ((await stat(full)).isFile()) out.push(relative(base, full));
  }
  return out;
}

const HASH = 'c0ffee'.padEnd(64, '0');
const KEY = 'ab'.repeat(16);

describe('a worker given hostile payloads', () => {
  it('fails each one as invalid without retries, writes nothing outside the results root, and then serves a valid job', async () => {
    const bcpnn = findModel('bcpnn-sequences');
    const valid = parseSweepText('name: hostile-ok\nmodel: no-op\nfixed: { value: 4 }\n', 'inline');
    const validJob = expandJobs(valid).next().value;
    if (validJob === undefined) throw new Error('the valid sweep has no job');
    const hugeParams = { hypercolumns: 1e12, minicolumns: 1e12 };
    const hugeKey = jobKey('bcpnn-sequences', bcpnn?.version ?? '?', hugeParams, 0);
    const hostile: Record<string, unknown> = {
      'wrong-types': {
        v: 1,
        sweep: { name: 42, hash: 'zz' },
        key: 7,
        model: ['no-op'],
        params: 'x',
        point: null,
        replicate: -1,
        seed: 'seed',
      },
      // Key and seed made to match, so the payload gets as far as the model's parameter schema.
      'huge-numbers': {
        v: 1,
        sweep: { name: 'hostile-big', hash: HASH },
        key: hugeKey,
        model: 'bcpnn-sequences',
        modelVersion: bcpnn?.version ?? '?',
        params: hugeParams,
        point: {},
        replicate: 0,
        seed: jobSeed(1, hugeKey),
        rootSeed: 1,
      },
      'path-in-name': {
        v: 1,
        sweep: { name: '../../etc/passwd', hash: HASH },
        key: KEY,
        model: 'no-op',
        modelVersion: '1',
        params: {},
        point: {},
        replicate: 0,
        seed: 1,
      },
      'huge-string': {
        v: 1,
        sweep: { name: 'hostile-str', hash: HASH },
        key: KEY,
        model: 'm'.repeat(1_000_000),
        modelVersion: '1',
        params: {},
        point: {},
        replicate: 0,
        seed: 1,
      },
      'not-an-object': 'rm -rf /',
    };
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(queue.name, { connection: client.duplicate(), prefix: queue.prefix });
    try {
      // The same retry policy submit uses, so "no retries" is the worker's decision.
      const opts = { attempts: 4, backoff: { type: 'exponential', delay: 1_000 } };
      for (const [id, data] of Object.entries(hostile))
        await q.add('hostile', data, { ...opts, jobId: `hostile-${id}` });
      await q.add('valid', toPayload(valid, validJob), { ...opts, jobId: 'valid-after' });

      await waitFor(
        'the valid job to complete',
        async () => ((await q.getJobState('valid-after')) === 'completed' ? true : undefined),
        60_000,
        250,
      );
      const expectations: Record<string, RegExp> = {
        'wrong-types': /invalid.*payload\.sweep\.name/,
        'huge-numbers': /invalid.*hypercolumns/,
        'path-in-name': /invalid.*sweep\.name/,
        'huge-string': /invalid.*payload\.model/,
        'not-an-object': /invalid/,
      };
      for (const [id, pattern] of Object.entries(expectations)) {
        const job = await q.getJob(`hostile-${id}`);
        expect(await job?.getState(), id).toBe('failed');
        expect(job?.failedReason, id).toMatch(pattern);
        // Unrecoverable: one attempt although four were allowed.
        expect(job?.attemptsMade, id).toBe(1);
        expect((job?.failedReason ?? '').length, id).toBeLessThan(5_000);
      }
    } finally {
      await q.close();
      client.disconnect();
    }

    // Still alive and serving, and it wrote the valid record where it belongs.
    expect(worker.child.exitCode).toBeNull();
    const written = await readNdjson(join(resultsRoot, 'hostile-ok', 'results'));
    expect(written.map((r) => r['key'])).toEqual([validJob.key]);
    const files = await filesUnder(base);
    for (const file of files) expect(file.startsWith(join('deep', 'a', 'results'))).toBe(true);
    await expect(stat(join(base, 'deep', 'etc'))).rejects.toThrow();
    // Only folders named by valid sweep names appear under the root.
    expect((await readdir(resultsRoot)).every((n) => /^[a-z0-9._-]+$/.test(n) && !n.includes('..'))).toBe(true);
  });
});

describe('a worker given payloads that claim another identity', () => {
  it("refuses forged keys, seeds and extra fields without writing any record, and files another sweep's job only in that sweep's folder", async () => {
    const mine = parseSweepText(
      'name: forge-target\nmodel: no-op\nseed: 5\nreplicates: 2\nfixed: { value: 3 }\n',
      'inline',
    );
    const store = ResultStore.at(resultsRoot, 'forge-target');
    await store.prepare(mine);
    const [first, second] = [...expandJobs(mine)];
    if (first === undefined || second === undefined) throw new Error('two jobs expected');
    const real = toPayload(mine, first);
    const other = parseSweepText('name: forge-other\nmodel: no-op\nfixed: { value: 9 }\n', 'inline');
    const otherJob = expandJobs(other).next().value;
    if (otherJob === undefined) throw new Error('the other sweep has no job');
    const payloads: Record<string, unknown> = {
      // A real key and seed with another value: the worker must not file 1000 under job 0.
      'forged-params': { ...real, params: { value: 1000 } },
      'forged-seed': { ...real, seed: (real.seed + 1) % 2 ** 53 },
      'forged-key': { ...real, key: second.key },
      'forged-point': { ...real, point: { value: 1000 } },
      'extra-field': { ...real, exec: 'touch /tmp/pwned' },
      'extra-param': { ...real, params: { ...real.params, command: 'ls' } },
      // A valid job of a sweep that has no folder here yet.
      'other-sweep': toPayload(other, otherJob),
    };
    const expectations: Record<string, RegExp> = {
      'forged-params': /^invalid: invalid job identity: key/,
      'forged-seed': /^invalid: invalid job identity: seed/,
      'forged-key': /^invalid: invalid job identity: key/,
      'forged-point': /^invalid: invalid job identity: point\.value/,
      'extra-field': /^invalid: invalid job payload: .*exec/i,
      'extra-param': /^invalid: invalid job identity|^invalid: invalid parameters/,
    };
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(queue.name, { connection: client.duplicate(), prefix: queue.prefix });
    try {
      const opts = { attempts: 4, backoff: { type: 'exponential', delay: 1_000 } };
      for (const [id, data] of Object.entries(payloads))
        await q.add('forged', data, { ...opts, jobId: `forged-${id}` });
      await waitFor(
        'every forged job to end',
        async () => {
          const states = await Promise.all(Object.keys(payloads).map((id) => q.getJobState(`forged-${id}`)));
          return states.every((s) => s === 'failed' || s === 'completed') ? true : undefined;
        },
        60_000,
        200,
      );
      for (const [id, pattern] of Object.entries(expectations)) {
        const job = await q.getJob(`forged-${id}`);
        expect(await job?.getState(), id).toBe('failed');
        expect(job?.failedReason, id).toMatch(pattern);
        expect(job?.attemptsMade, id).toBe(1);
      }
      expect(await q.getJobState('forged-other-sweep')).toBe('completed');
    } finally {
      await q.close();
      client.disconnect();
    }
    // Nothing was filed under the target sweep: no result and no failure record.
    expect(await readNdjson(store.resultsDir)).toEqual([]);
    expect(await readNdjson(store.failuresDir)).toEqual([]);
    // The other sweep's record is in its own folder, directly under the results root, and nowhere else.
    const otherRecords = await readNdjson(join(resultsRoot, 'forge-other', 'results'));
    expect(otherRecords.map((r) => r['key'])).toEqual([otherJob.key]);
    expect(otherRecords[0]?.['sweepHash']).toBe(other.hash);
    for (const file of await filesUnder(base)) expect(file.startsWith(join('deep', 'a', 'results'))).toBe(true);
    expect(worker.child.exitCode).toBeNull();
  });
});

describe('a worker given jobs whose stored data it cannot read', () => {
  it('fails each at once as invalid (one attempt, no stall loop) and keeps serving', async () => {
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(queue.name, { connection: client.duplicate(), prefix: queue.prefix });
    // Raw values of the job hash's data field, as anyone who can write to Redis could leave them.
    const raw: Record<string, string> = {
      'not-json': '{"v":1, "sweep": {',
      binary: '\u0000\u00ff\u0007',
      number: '42',
      null: 'null',
      array: '[1,2,3]',
      'missing-fields': '{"v":1}',
      // Over MAX_PAYLOAD_CHARS (1 MiB): refused unread.
      huge: JSON.stringify({ v: 1, pad: 'x'.repeat(2 * 1024 * 1024) }),
    };
    const expectations: Record<string, RegExp> = {
      'not-json': /^invalid: invalid job payload: the payload is not JSON/,
      binary: /^invalid: invalid job payload: the payload is not JSON/,
      number: /^invalid: invalid job payload/,
      null: /^invalid: invalid job payload/,
      array: /^invalid: invalid job payload/,
      'missing-fields': /^invalid: invalid job payload: payload\.sweep/,
      huge: /^invalid: invalid job payload: the payload is 20971\d\d characters of JSON, more than the 1048576/,
    };
    try {
      const opts = { attempts: 4, backoff: { type: 'exponential', delay: 1_000 } };
      // Added delayed (no worker can take them yet), the data overwritten, then released together.
      for (const [id, data] of Object.entries(raw)) {
        await q.add('raw', {}, { ...opts, jobId: `raw-${id}`, delay: 3_600_000 });
        await client.hset(`${queue.prefix}:${queue.name}:raw-${id}`, 'data', data);
      }
      await q.promoteJobs();
      const valid = parseSweepText('name: raw-ok\nmodel: no-op\nfixed: { value: 5 }\n', 'inline');
      const validJob = expandJobs(valid).next().value;
      if (validJob === undefined) throw new Error('the valid sweep has no job');
      await q.add('valid', toPayload(valid, validJob), { ...opts, jobId: 'raw-valid-after' });
      const states = async (): Promise<string[]> =>
        Promise.all(Object.keys(raw).map((id) => q.getJobState(`raw-${id}`)));
      await waitFor(
        'every raw job to fail and the valid one to complete',
        async () =>
          (await states()).every((s) => s === 'failed') && (await q.getJobState('raw-valid-after')) === 'completed'
            ? true
            : undefined,
        60_000,
        200,
      );
      for (const [id, pattern] of Object.entries(expectations)) {
        const key = `${queue.prefix}:${queue.name}:raw-${id}`;
        // Read from the hash itself: BullMQ's getJob would try to parse the data again.
        const [reason, made, stalled] = await client.hmget(key, 'failedReason', 'atm', 'stc');
        expect(reason, id).toMatch(pattern);
        // Unrecoverable: one attempt although four were allowed, and it never stalled.
        expect(made, id).toBe('1');
        expect(stalled ?? '0', id).toBe('0');
      }
    } finally {
      await q.close();
      client.disconnect();
    }
    expect(worker.child.exitCode).toBeNull();
    expect((await readNdjson(join(resultsRoot, 'raw-ok', 'results'))).length).toBe(1);
  });
});

describe('requeue --failed', () => {
  it('gives a job that failed for good a fresh start, and progress counts its failure by kind', async () => {
    // One trial per queue job, so the counts below are counts of queue jobs too.
    const text = 'name: retry-me\nmodel: no-op\nreplicates: 3\nbatch: 1\n';
    const sweep = parseSweepText(text, 'inline');
    const store = ResultStore.at(resultsRoot, 'retry-me');
    await store.prepare(sweep);
    const jobs = [...expandJobs(sweep)];
    const broken = jobs[0];
    if (broken === undefined) throw new Error('no job');
    const client = await inspector(SHARED_REDIS);
    const q = new Queue(queue.name, { connection: client.duplicate(), prefix: queue.prefix });
    const flags = ['--redis', SHARED_REDIS, '--json', ...queue.flags];
    try {
      // The first job arrives asking for a model version no worker has: it fails without retries.
      // Key and seed as a coordinator with version 999 of the model would make them.
      const params = broken.params as Record<string, unknown>;
      const key999 = jobKey('no-op', '999', params, broken.replicate);
      await q.add(
        'retry-me',
        { ...toPayload(sweep, broken), modelVersion: '999', key: key999, seed: jobSeed(sweep.spec.seed, key999) },
        { jobId: jobIdFor(sweep.hash, broken.key), attempts: 4 },
      );
      await waitFor(
        'the job to fail',
        async () => ((await q.getJobState(jobIdFor(sweep.hash, broken.key))) === 'failed' ? true : undefined),
        60_000,
        200,
      );
      const job = await q.getJob(jobIdFor(sweep.hash, broken.key));
      expect(job?.failedReason).toMatch(/^unsupported: job needs no-op version 999/);

      // Plain requeue leaves the failed job alone and queues the two others.
      const plain = JSON.parse((await runCli(['requeue', store.dir, ...flags, ...TEST_MODEL_FLAGS])).stdout) as Record<
        string,
        number
      >;
      expect(plain).toMatchObject({ planned: 3, enqueued: 2, failedKept: 1, retried: 0 });
      await waitFor(
        'two results',
        async () => ((await readNdjson(store.resultsDir)).length === 2 ? true : undefined),
        60_000,
        200,
      );
      const before = JSON.parse(
        (await runCli(['progress', store.dir, ...flags, ...TEST_MODEL_FLAGS])).stdout,
      ) as Record<string, unknown>;
      expect(before).toMatchObject({ planned: 3, finished: 2, failingJobs: 1, failuresByKind: { unsupported: 1 } });
      expect((before['queue'] as Record<string, number>)['failed']).toBe(1);

      const retried = JSON.parse(
        (await runCli(['requeue', store.dir, '--failed', ...flags, ...TEST_MODEL_FLAGS])).stdout,
      ) as Record<string, number>;
      expect(retried).toMatchObject({ retried: 1, enqueued: 0 });
      await waitFor(
        'three results',
        async () => ((await readNdjson(store.resultsDir)).length === 3 ? true : undefined),
        60_000,
        200,
      );
      const keys = (await readNdjson(store.resultsDir)).map((r) => r['key']).sort();
      expect(keys).toEqual(jobs.map((j) => j.key).sort());
    } finally {
      await q.close();
      client.disconnect();
    }
  });
});
