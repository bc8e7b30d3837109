import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Redis } from 'ioredis';
import { afterAll, afterEach, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { gatherFrom } from '../../coordinator/gather.js';
import { useModelOptions } from '../../coordinator/model-options.js';
import { sweepProgress } from '../../coordinator/queue-progress.js';
import { requeueIn } from '../../coordinator/requeue.js';
import { submitTo } from '../../coordinator/submit-sweep.js';
import { unpackBatch } from '../../shared/queue/batch-payload.js';
import { packResults } from '../../shared/queue/batch-result.js';
import { batchSizeFor, MAX_BATCH_TRIALS } from '../../shared/queue/batch-size.js';
import { MemoryQueue } from '../../shared/queue/memory/memory-queue.js';
import type { JobVerdict } from '../../shared/queue/work-consumer.js';
import type { JobPayload } from '../../shared/schemas/records.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { expandJobs, type PlannedJob, toPayload } from '../../shared/sweep/expand.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { runJob } from '../../worker/run-job.js';
import { useTestModels } from '../fixtures/test-models.js';
import {
  deleteKeys,
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

// Trials per queue job: sizing, the override, counts in trials against the in-memory queue, and a
// batch killed half-way through a real worker process on a real Redis.

describe('batch sizing from the trial cost', () => {
  it('fills about 1.5 s of work per job, one trial when the cost is unknown, at most the cap', () => {
    // Arithmetic from the 1.5 s target (common practice, no source): 1.5 / 0.014 = 107.1.
    expect(batchSizeFor(0.014)).toBe(107);
    expect(batchSizeFor(0.5)).toBe(3);
    expect(batchSizeFor(2)).toBe(1);
    expect(batchSizeFor(null)).toBe(1);
    expect(batchSizeFor(0)).toBe(MAX_BATCH_TRIALS);
    expect(batchSizeFor(1e-6)).toBe(MAX_BATCH_TRIALS);
  });
});

const TEXT = 'name: batch-sweep\nmodel: no-op\nseed: 7\nreplicates: 5\nvary:\n  value: { list: [1, 2, 3, 4] }\n';
const PLANNED = 20; // 4 points x 5 replicates, as the text says

let root = '';
let sweep: LoadedSweep;
let jobs: PlannedJob[];

beforeEach(async () => {
  root = await mkdtemp(join(tmpdir(), 'rs-batch-'));
  sweep = parseSweepText(TEXT, 'batch.yaml');
  jobs = [...expandJobs(sweep)];
});

afterEach(async () => {
  await rm(root, { recursive: true, force: true });
});

/** Run a batch's trials for real (as the threads do) and return its packed records. */
function runBatch(data: unknown): JobVerdict {
  const batch = unpackBatch(data);
  if (!batch.ok) throw new Error(batch.message);
  const records = batch.trials.payloads().map((p: JobPayload) => {
    const outcome = runJob(p, { writer: 'memory-worker', run: 'r1' });
    if (!outcome.ok) throw new Error(outcome.message);
    return outcome.record;
  });
  return { kind: 'done', value: packResults(records) };
}

async function serve(queue: MemoryQueue): Promise<void> {
  const consumer = queue.consume(async (job) => runBatch(job.data), { concurrency: 2 });
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
}

describe('trials per queue job against the in-memory queue', () => {
  it('cuts the same blocks after the queue lost everything, from the size kept in the sweep folder, without timing the model', async () => {
    const queue = new MemoryQueue();
    // 0.3 s a trial: 1.5 / 0.3 = 5 trials a job (arithmetic from the 1.5 s target).
    const report = await submitTo(queue, sweep, root, { secondsPerTrial: 0.3 });
    expect(report.batchSize).toBe(5);
    const before = queue.all().map((j) => [j.key, j.trials]);
    expect(before).toHaveLength(4);
    const store = ResultStore.open(join(root, 'batch-sweep'));
    expect(JSON.parse(await readFile(join(store.dir, 'queue-batch.json'), 'utf8'))).toEqual({
      v: 1,
      hash: sweep.hash,
      batch: 5,
    });
    // Redis lost its data: the agreed size went with it. Timing the no-op model would give the cap
    // (1,000 trials, one job); the folder's copy gives the same four jobs again.
    queue.flush();
    expect(await requeueIn(queue, store, sweep, false, undefined)).toMatchObject({ enqueued: PLANNED });
    expect(queue.all().map((j) => [j.key, j.trials])).toEqual(before);
    expect(await queue.agreedBatchSize(sweep.hash)).toBe(5);
  });

  it('cuts the sweep into jobs of the size given on submit, with the keys and seeds the trials have alone', async () => {
    const queue = new MemoryQueue();
    const report = await submitTo(queue, sweep, root, { batch: 6 });
    // 20 trials in blocks of 6: 6 + 6 + 6 + 2 (arithmetic).
    expect(report).toMatchObject({ planned: PLANNED, enqueued: PLANNED, batchSize: 6 });
    expect(queue.all().map((j) => j.trials)).toEqual([6, 6, 6, 2]);
    const carried = queue.all().flatMap((j) => {
      const batch = unpackBatch(j.data);
      if (!batch.ok) throw new Error(batch.message);
      return batch.trials.payloads();
    });
    // The single-job payloads the planner makes for the same trials (shared/sweep/expand.ts).
    expect(carried).toEqual(jobs.map((job) => toPayload(sweep, job)));
    expect(await queue.counts(sweep.hash)).toEqual({ waiting: PLANNED, active: 0, delayed: 0, failed: 0 });
  });

  it('takes the sweep file batch field, and submit --batch over it', async () => {
    const withField = parseSweepText(`${TEXT}batch: 8\n`, 'batch.yaml');
    // The field changes no job, so it changes no hash.
    expect(withField.hash).toBe(sweep.hash);
    const queue = new MemoryQueue();
    expect((await submitTo(queue, withField, root)).batchSize).toBe(8);
    expect(queue.all().map((j) => j.trials)).toEqual([8, 8, 4]);
    const other = new MemoryQueue();
    expect((await submitTo(other, withField, root, { batch: 10 })).batchSize).toBe(10);
    expect(other.all().map((j) => j.trials)).toEqual([10, 10]);
  });

  it('sizes jobs from a given trial cost when nothing else says, and a later requeue keeps that size', async () => {
    const queue = new MemoryQueue();
    // 1.5 s / 0.3 s = 5 trials a job (arithmetic).
    expect((await submitTo(queue, sweep, root, { secondsPerTrial: 0.3 })).batchSize).toBe(5);
    queue.flush();
    // Redis lost everything; the sweep file says nothing: the size comes from calibration again,
    // so here it is agreed first as it would be by an earlier submit.
    await queue.batchSize(sweep.hash, 5, false);
    const store = ResultStore.open(join(root, 'batch-sweep'));
    const again = await requeueIn(queue, store, sweep, false, undefined);
    expect(again.enqueued).toBe(PLANNED);
    expect(queue.all().map((j) => j.trials)).toEqual([5, 5, 5, 5]);
  });

  it('counts trials in requeue, progress and gather, and requeues only the missing trials of a block', async () => {
    const queue = new MemoryQueue();
    await submitTo(queue, sweep, root, { batch: 6 });
    const store = ResultStore.open(join(root, 'batch-sweep'));
    // A second submit adds nothing: every trial's block is in the queue.
    expect(await requeueIn(queue, store, sweep, false, undefined)).toMatchObject({ enqueued: 0, inQueue: PLANNED });
    await serve(queue);
    const progress = await sweepProgress(store, sweep, queue);
    expect(progress).toMatchObject({ planned: PLANNED, onDisk: 0, finished: PLANNED });
    expect(progress.queue).toMatchObject({ finishedNotGathered: PLANNED, waiting: 0 });
    const gathered = await gatherFrom(queue, store, sweep, undefined);
    expect(gathered).toMatchObject({ found: PLANNED, copied: PLANNED, rejected: 0, removed: 4 });
    expect((await store.completedKeys()).size).toBe(PLANNED);

    // Three trials lose their records (a folder restored from an older copy): only they go back,
    // in the jobs of their blocks.
    const lost = new Set([jobs[1]?.key, jobs[2]?.key, jobs[13]?.key]);
    const kept = (await readNdjson(join(store.dir, 'results'))).filter((r) => !lost.has(r['key'] as string));
    await rm(join(store.dir, 'results'), { recursive: true, force: true });
    const writer = store.openWriter('restored');
    for (const record of kept) writer.appendResult(record as never);
    writer.sync();
    writer.close();
    const requeued = await requeueIn(queue, store, sweep, false, undefined);
    expect(requeued).toMatchObject({ planned: PLANNED, done: PLANNED - 3, enqueued: 3 });
    // Block 0 (trials 0-5) misses two, block 2 (trials 12-17) one; each job is named by its block's first key.
    expect(queue.all().map((j) => [j.key, j.trials])).toEqual([
      [jobs[0]?.key, 2],
      [jobs[12]?.key, 1],
    ]);
    const during = await sweepProgress(store, sweep, queue);
    expect(during).toMatchObject({ onDisk: PLANNED - 3, finished: PLANNED - 3 });
    expect(during.queue).toMatchObject({ waiting: 3 });
  });
});

describe('a bad batch size', () => {
  it('is refused with exit 2 naming the field or option, before Redis or the disk is touched', async () => {
    const dir = await tempDir('batch-bad');
    try {
      const file = join(dir, 'bad.yaml');
      await writeFile(file, 'name: bad-batch\nmodel: no-op\nbatch: 0\n');
      const out = join(dir, 'out');
      // An unreachable Redis: a refusal that needed it would fail differently (exit 1).
      const inFile = await runCli(['submit', file, '--redis', 'redis://127.0.0.1:1', '--out', out]);
      expect(inFile.code).toBe(2);
      expect(inFile.stderr).toMatch(/batch: batch must be a whole number of trials per queue job from 1 to 1000/);
      await writeFile(file, 'name: bad-batch\nmodel: no-op\n');
      const option = await runCli(['submit', file, '--batch', '1001', '--redis', 'redis://127.0.0.1:1', '--out', out]);
      expect(option.code).toBe(2);
      expect(option.stderr).toMatch(/--batch: must be a whole number from 1 to 1000, got "1001"/);
      expect(await readNdjson(out)).toEqual([]);
      await expect(import('node:fs/promises').then((fs) => fs.access(out))).rejects.toThrow();
    } finally {
      await removeDir(dir);
    }
  });
});

// ---- a real worker killed inside a batch ----------------------------------------------------

const FIXTURES = join(import.meta.dirname, '..', 'finish', 'fixtures');

describe('a batch killed half-way', () => {
  let dir = '';
  const started: Running[] = [];
  const queue = uniqueQueue();
  beforeAll(async () => {
    dir = await tempDir('batch-kill');
  });
  afterAll(async () => {
    for (const running of started) await stopCli(running, 5_000);
    await deleteKeys(SHARED_REDIS, queue.prefix);
    await removeDir(dir);
  });

  it('ends with every trial recorded exactly once after SIGKILL and a restarted worker, with a shared disk and without', async () => {
    // 2 points x 6 replicates of the pause model (300 ms each, on a timer), 6 trials a job: 2 jobs.
    const file = join(dir, 'kill.yaml');
    await writeFile(
      file,
      'name: kill-batch\nmodel: pause\nseed: 9\nreplicates: 6\nbatch: 6\nfixed: { waitMs: 300 }\nvary:\n  value: { list: [1, 2] }\n',
    );
    const planned = 12;
    const coordinator = join(dir, 'coordinator');
    const sweepDir = join(coordinator, 'kill-batch');
    const submitted = await runCli([
      'submit',
      file,
      '--redis',
      SHARED_REDIS,
      '--out',
      coordinator,
      '--json',
      '--models',
      FIXTURES,
      ...queue.flags,
    ]);
    expect(submitted.code, submitted.stderr).toBe(0);
    expect(JSON.parse(submitted.stdout)).toMatchObject({ planned, enqueued: planned, batchSize: 6 });

    const timing = ['--lock-ms', '2000', '--stall-check-ms', '1000', '--prefetch', '0', '--threads', '1'];
    const worker = (out: string, name: string): Running => {
      const running = startCli(
        [
          'worker',
          '--redis',
          SHARED_REDIS,
          '--out',
          out,
          '--name',
          name,
          '--models',
          FIXTURES,
          ...timing,
          ...queue.flags,
        ],
        { RECALLSCAPE_LOG_LEVEL: 'warn' },
      );
      started.push(running);
      return running;
    };
    // Worker A shares the coordinator's disk and starts alone; worker B, on a disk of its own, after the kill.
    const own = join(dir, 'machine-b');
    const a = worker(coordinator, 'machine-a');
    // Kill A once it has recorded some but not all trials of its batch.
    await waitFor(
      'worker A half-way through its batch',
      async () => {
        const n = (await readNdjson(join(sweepDir, 'results'))).length;
        return n >= 2 && n < 6 ? true : undefined;
      },
      60_000,
      20,
    );
    a.child.kill('SIGKILL');
    expect((await a.exited).signal).toBe('SIGKILL');
    worker(coordinator, 'machine-a');
    worker(own, 'machine-b');

    const store = ResultStore.open(sweepDir);
    // Reading sweep.json needs the fixture model registered in this process too.
    await useModelOptions({ models: FIXTURES });
    const client = new Redis(SHARED_REDIS);
    try {
      // B's batch comes back through Redis: gather until the folder holds every trial.
      await waitFor(
        'every trial recorded in the coordinator folder',
        async () => {
          const gathered = await runCli([
            'gather',
            sweepDir,
            '--redis',
            SHARED_REDIS,
            '--models',
            FIXTURES,
            ...queue.flags,
          ]);
          expect(gathered.code, gathered.stderr).toBe(0);
          // Counts in trials; what leaves Redis is queue jobs of several trials each.
          expect(gathered.stdout).toMatch(/^found +\d+ finished trial\(s\) in Redis$/m);
          expect(gathered.stdout).toMatch(
            /^freed +\d+ queue job\(s\) removed from Redis \(a job carries a batch of trials\)$/m,
          );
          return (await store.completedKeys()).size === planned ? true : undefined;
        },
        90_000,
        500,
      );
      const keys: string[] = [];
      for await (const record of store.records()) keys.push(record.key);
      // Each planned trial once, as the planner names them.
      const sweep = await store.readSweep();
      expect(keys.sort()).toEqual([...expandJobs(sweep)].map((j) => j.key).sort());
      // The killed batch ran again whole: its first trials have a second, equal record on one of the
      // two disks (gather does not copy a key the folder already has), and readers see one per key.
      const lines = [
        ...(await readNdjson(join(sweepDir, 'results'))),
        ...(await readNdjson(join(own, 'kill-batch', 'results'))),
      ];
      expect(lines.length).toBeGreaterThan(planned);
      expect(new Set(lines.map((r) => r['key'])).size).toBe(planned);
      // Nothing of the sweep's jobs is left in Redis: A's left as they completed, B's were gathered.
      const left = await client.keys(`${queue.prefix}:${queue.name}:${sweep.hash.slice(0, 16)}-*`);
      expect(left).toEqual([]);
    } finally {
      client.disconnect();
    }
  });
});
