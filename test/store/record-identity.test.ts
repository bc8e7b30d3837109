import { appendFile, mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { gatherFrom } from '../../coordinator/gather.js';
import { readPastRuns } from '../../coordinator/past-runs.js';
import { requeueIn } from '../../coordinator/requeue.js';
import { collectReport } from '../../coordinator/summarize/collect.js';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import { createLogger } from '../../shared/logger.js';
import { MemoryQueue } from '../../shared/queue/memory/memory-queue.js';
import type { ResultRecord } from '../../shared/schemas/records.js';
import { ResultStore, type StoreWarning } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob, toPayload } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { runJob } from '../../worker/run-job.js';
import { useTestModels } from '../fixtures/test-models.js';
import { waitFor } from '../queue/helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

// Every reader sets aside records whose key, seed or point is not what the sweep gives (issue 9, item 2).

const TEXT = 'name: identity-read\nmodel: no-op\nseed: 7\nreplicates: 2\nvary:\n  value: { list: [1, 2, 3] }\n';

let root = '';
let sweep: LoadedSweep;
let jobs: PlannedJob[];
let store: ResultStore;

beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-identity-'));
  sweep = parseSweepText(TEXT, 'identity.yaml');
  jobs = [...expandJobs(sweep)];
  store = ResultStore.at(root, sweep.spec.name);
  await store.prepare(sweep);
});

afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

/** The record a worker writes for a job (run for real). */
function recordOf(job: PlannedJob): ResultRecord {
  const outcome = runJob(toPayload(sweep, job), { writer: 'w', run: 'r1' });
  if (!outcome.ok) throw new Error(`${outcome.kind}: ${outcome.message}`);
  return outcome.record;
}

function job(i: number): PlannedJob {
  const j = jobs[i];
  if (j === undefined) throw new Error(`no job ${i}`);
  return j;
}

async function writeShard(name: string, records: readonly unknown[]): Promise<void> {
  await appendFile(join(store.resultsDir, name), records.map((r) => `${JSON.stringify(r)}\n`).join(''));
}

/**
 * Forgeries of job 0's record, as a writer to Redis or to a shard could make
 * them: each keeps the real key (or a self-made one) and changes what it stands for.
 */
function forgeries(): Record<string, ResultRecord> {
  const real = recordOf(job(0));
  const selfMadeParams = { value: 1000 };
  const selfMade = jobKey('no-op', '1', selfMadeParams, 0);
  return {
    otherPoint: { ...real, point: { value: 3 }, metrics: { ...real.metrics, value: 3 } },
    otherSeed: { ...real, seed: real.seed + 1 },
    otherReplicate: { ...real, replicate: 1 },
    otherVersion: { ...real, modelVersion: '2' },
    extraName: { ...real, point: { ...real.point, noise: 1 } },
    beyondReplicates: (() => {
      const key = jobKey('no-op', '1', { value: 1 }, 5);
      return { ...real, replicate: 5, key, seed: jobSeed(7, key) };
    })(),
    // Consistent with itself, but the point it names does not give these parameters.
    selfMadeKey: { ...real, key: selfMade, seed: jobSeed(7, selfMade), metrics: { ...real.metrics, value: 1000 } },
    // Consistent in key, but the seed comes from another root seed than sweep.json's.
    otherRootSeed: { ...real, seed: jobSeed(8, real.key) },
  };
}

describe('the result store reading records', () => {
  it('sets aside every forgery with one warning naming the file and the count, and keeps the real record', async () => {
    const forged = Object.values(forgeries());
    // The forgeries come first in shard order, so without the check they would shadow the real record.
    await writeShard('a-forged.ndjson', forged);
    await writeShard('z-real.ndjson', jobs.map(recordOf));
    const warnings: StoreWarning[] = [];
    const records: ResultRecord[] = [];
    for await (const r of store.records({ onWarning: (w) => warnings.push(w) })) records.push(r);
    expect(records.length).toBe(jobs.length);
    const first = records.find((r) => r.key === job(0).key);
    // no-op echoes its value parameter (docs of the model); job 0 is value 1.
    expect(first?.metrics['value']).toBe(1);
    expect(first?.seed).toBe(job(0).seed);
    expect(warnings.map((w) => w.kind)).toEqual(['mismatch']);
    expect(warnings[0]?.file).toBe(join(store.resultsDir, 'a-forged.ndjson'));
    expect(warnings[0]?.message).toContain(
      `${forged.length} record(s) whose key, seed or point is not what this sweep gives`,
    );
    expect(warnings[0]?.line).toBe(1);
  });

  it('counts a job whose only record is forged as not done, in resume, requeue and the report', async () => {
    const { otherSeed, selfMadeKey } = forgeries();
    // Job 0 has only forged records; the others have real ones.
    await writeShard('a-forged.ndjson', [otherSeed, selfMadeKey]);
    await writeShard('z-real.ndjson', jobs.slice(1).map(recordOf));

    const chunks: string[] = [];
    const destination = new Writable({
      write(chunk: Buffer, _enc, done) {
        chunks.push(chunk.toString());
        done();
      },
    });
    const logger = createLogger({ name: 'test', level: 'warn', destination });
    const past = await readPastRuns(store, logger);
    expect(past.done.size).toBe(jobs.length - 1);
    expect(past.done.has(job(0).key)).toBe(false);
    const logged = chunks.join('');
    expect(logged).toContain('a-forged.ndjson: 2 record(s) whose key, seed or point is not what this sweep gives');

    const queue = new MemoryQueue();
    const requeued = await requeueIn(queue, ResultStore.open(store.dir), sweep, false, logger);
    expect(requeued.enqueued).toBe(1);
    expect(queue.job(sweep.hash, job(0).key)?.state).toBe('waiting');

    const report = await collectReport(ResultStore.open(store.dir), { dir: store.dir, formats: ['csv'] });
    expect(report.completedJobs).toBe(jobs.length - 1);
    expect(report.warnings.filter((w) => w.kind === 'mismatch').length).toBe(1);
  });

  it('has gather refuse a return value that carries the right key with forged content', async () => {
    const queue = new MemoryQueue();
    await queue.add(
      { hash: sweep.hash, name: sweep.spec.name },
      jobs.map((j) => ({ key: j.key, payload: toPayload(sweep, j) })),
      { retryFailed: false },
    );
    const { otherSeed, otherPoint } = forgeries();
    const consumer = queue.consume(
      async (consumed) => {
        const key = (consumed.data as { key: string }).key;
        // Job 0 finishes with a forged record; a writer to Redis could leave the same as its return value.
        if (key === job(0).key) return { kind: 'done', value: otherSeed };
        if (key === job(1).key) return { kind: 'done', value: { ...otherPoint, key: job(1).key } };
        const planned = jobs.find((j) => j.key === key);
        if (planned === undefined) throw new Error('unknown job');
        return { kind: 'done', value: recordOf(planned) };
      },
      { concurrency: 2 },
    );
    await consumer.start();
    await waitFor(
      'the queue to be idle',
      async () => {
        const { waiting, active } = await queue.counts(sweep.hash);
        return waiting + active === 0 ? true : undefined;
      },
      5_000,
      5,
    );
    await consumer.close();
    const gathered = await gatherFrom(queue, store, sweep, undefined);
    expect(gathered).toMatchObject({ found: jobs.length, copied: jobs.length - 2, rejected: 2 });
    const onDisk = await store.completedKeys();
    expect(onDisk.has(job(0).key)).toBe(false);
    expect(onDisk.has(job(1).key)).toBe(false);
    expect(queue.job(sweep.hash, job(0).key)?.state).toBe('completed');
  });
});
