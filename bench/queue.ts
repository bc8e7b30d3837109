/**
 * Trials per queue job, measured (the default run, under about 3 minutes):
 * for the no-op model and a tiny model, 1 and 4 worker processes, batching
 * off (one trial a job) and on (sized from the calibrated cost), on a
 * redis-server of its own: Redis CPU per trial (INFO cpu used_cpu_sys +
 * used_cpu_user, and INFO commandstats, before and after), Redis bytes per
 * queued trial and per finished trial not yet gathered (INFO used_memory,
 * workers without a shared disk), and worker trials/s. Then bytes per
 * finished trial with a shared disk (the jobs leave Redis as they complete).
 *
 * Then tiny trials, one worker process against the embedded runner
 * (bench/tiny-jobs.ts). RECALLSCAPE_BENCH_QUEUE_ONLY=matrix or =tiny runs
 * only the one part.
 *
 * With RECALLSCAPE_BENCH_QUEUE_FULL=1 it also runs the earlier figures: the
 * queue path (submit -> Redis -> worker -> result shard -> gather) with
 * the no-op model, so every millisecond measured is overhead:
 * - time to submit 100,000 jobs, and to submit the same sweep again;
 * - Redis memory per 1,000 waiting jobs;
 * - jobs per second and per-job overhead with 1 and 2 worker processes
 *   (`recallscape worker --threads 1`, simulations in worker threads), with
 *   `--prefetch auto` (the default), 0 and 4 (jobs held beyond the running one), on
 *   10,000 jobs to keep the section short (RECALLSCAPE_BENCH_QUEUE_JOBS changes it);
 * - Redis memory of a finished sweep before and after `gather`.
 * Runs against a redis-server of its own on a free port when `redis-server`
 * is installed (memory figures need a quiet server), else against
 * RECALLSCAPE_REDIS_URL or 127.0.0.1:6379 with a unique queue, deleted afterwards.
 */
import { type ChildProcess, spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { closeSync, fdatasyncSync, openSync, writeSync } from 'node:fs';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { setTimeout as sleep } from 'node:timers/promises';
import { fileURLToPath } from 'node:url';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { cancelSweep } from '../coordinator/cancel.js';
import { gatherSweep } from '../coordinator/gather.js';
import { type QueueSettings, queueSettings } from '../coordinator/queue-session.js';
import { submitSweep } from '../coordinator/submit-sweep.js';
import { registerModelFolders } from '../shared/models/external/model-folders.js';
import { REDIS_URL_ENV } from '../shared/redis-url.js';
import { compareTinyJobs, deleteKeys } from './tiny-jobs.js';

const CLI = fileURLToPath(new URL('../../bin/recallscape.js', import.meta.url));
/** The no-op model is a test model (a module model), not built in: the workers and this process load it. */
const TEST_MODELS = fileURLToPath(new URL('../../test/fixtures/models', import.meta.url));
const SUBMIT_JOBS = 100_000;
const RUN_JOBS = Number(process.env['RECALLSCAPE_BENCH_QUEUE_JOBS'] ?? 10_000);

function freePort(): Promise<number> {
  return new Promise((done, fail) => {
    const server = createServer();
    server.on('error', fail);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      server.close(() => done(typeof address === 'object' && address !== null ? address.port : 0));
    });
  });
}

interface Server {
  readonly url: string;
  readonly own: boolean;
  stop(): Promise<void>;
}

export async function startServer(): Promise<Server> {
  const port = await freePort();
  const child = spawn(
    'redis-server',
    ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'],
    { stdio: 'ignore' },
  );
  const spawned = await new Promise<boolean>((done) => {
    child.once('error', () => done(false));
    child.once('spawn', () => done(true));
  });
  if (!spawned) {
    const url = process.env[REDIS_URL_ENV] ?? 'redis://127.0.0.1:6379';
    return { url, own: false, stop: async () => undefined };
  }
  const url = `redis://127.0.0.1:${port}`;
  for (let i = 0; i < 100; i++) {
    const probe = new Redis(url, { lazyConnect: true, retryStrategy: () => null, maxRetriesPerRequest: 0 });
    probe.on('error', () => undefined);
    const ok = await probe.connect().then(
      () => true,
      () => false,
    );
    probe.disconnect();
    if (ok) break;
    await sleep(100);
  }
  return {
    url,
    own: true,
    async stop() {
      const closed = new Promise((done) => child.once('close', done));
      child.kill('SIGTERM');
      await closed;
    },
  };
}

async function usedMemory(client: Redis): Promise<number> {
  // Let lazy frees finish so the figure is what the data holds.
  await sleep(300);
  const info = await client.info('memory');
  return Number(/used_memory:(\d+)/.exec(info)?.[1] ?? NaN);
}

function startWorker(
  url: string,
  settings: QueueSettings,
  out: string,
  prefetch: number | 'auto',
): { child: ChildProcess; ready: Promise<void> } {
  const child = spawn(
    process.execPath,
    [
      CLI,
      'worker',
      '--redis',
      url,
      '--threads',
      '1',
      '--prefetch',
      String(prefetch),
      '--out',
      out,
      '--queue',
      settings.queue.name,
      '--prefix',
      settings.queue.prefix,
      '--models',
      TEST_MODELS,
    ],
    {
      stdio: ['ignore', 'ignore', 'pipe'],
      env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'info' },
    },
  );
  const ready = new Promise<void>((done, fail) => {
    let text = '';
    child.stderr?.on('data', (d: Buffer) => {
      text += d.toString();
      if (text.includes('worker ready')) done();
    });
    child.once('close', () => fail(new Error(`worker exited early: ${text.slice(-500)}`)));
  });
  return { child, ready };
}

async function stopWorker(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null) return;
  const closed = new Promise((done) => child.once('close', done));
  child.kill('SIGTERM');
  await closed;
}

const ms = (t0: number): number => performance.now() - t0;

async function throughput(
  url: string,
  client: Redis,
  workers: number,
  prefetch: number | 'auto',
  root: string,
  file: string,
): Promise<void> {
  const tag = randomBytes(3).toString('hex');
  const settings = queueSettings({ redis: url, queue: `bench-${tag}`, prefix: `rsb${tag}`, connectTimeout: '10000' });
  const out = join(root, `run-${workers}-${prefetch}`);
  // Workers on a disk of their own: completed jobs then stay in Redis (with
  // their finishedOn) until gather, which is what these figures count.
  const procs = Array.from({ length: workers }, () => startWorker(url, settings, join(out, 'worker'), prefetch));
  await Promise.all(procs.map((p) => p.ready));
  const t0 = performance.now();
  await submitSweep(file, out, settings, undefined, { batch: 1 });
  const completedKey = `${settings.queue.prefix}:${settings.queue.name}:completed`;
  while ((await client.zcard(completedKey)) < RUN_JOBS) await sleep(50);
  const wall = ms(t0) / 1000;
  // finishedOn scores: rate between the first and last finished job, without start-up and submit.
  const first = Number((await client.zrange(completedKey, 0, '0', 'WITHSCORES'))[1]);
  const last = Number((await client.zrange(completedKey, -1, '-1', 'WITHSCORES'))[1]);
  await Promise.all(procs.map((p) => stopWorker(p.child)));
  const steady = (RUN_JOBS - 1) / ((last - first) / 1000);
  console.log(
    `  ${workers} worker(s) x 1 thread, prefetch ${prefetch}: ${steady.toFixed(0)} jobs/s steady (${((1000 * workers) / steady).toFixed(2)} ms per job per worker), ` +
      `${(RUN_JOBS / wall).toFixed(0)} jobs/s including submit (${RUN_JOBS} jobs in ${wall.toFixed(1)} s)`,
  );
  if (workers === 1 && prefetch === 0) {
    const kept = await usedMemory(client);
    const dir = join(out, 'bench-run');
    const g = await gatherSweep(dir, settings, undefined);
    const after = await usedMemory(client);
    console.log(
      `  finished sweep in Redis: ${((kept - after) / g.removed).toFixed(0)} bytes per completed job kept until gathered; ` +
        `after gather ${g.removed} jobs freed, the queue keeps ${((after - baseline) / 2 ** 20).toFixed(2)} MB (events stream and metadata, independent of sweep size)`,
    );
  }
  await deleteKeys(client, settings.queue.prefix);
}

let baseline = 0;

/** Median time of a 300-byte append plus fdatasync in `dir`, the durability cost a worker pays per job. */
async function syncLatency(dir: string): Promise<number> {
  const fd = openSync(join(dir, 'sync-probe'), 'a');
  const times: number[] = [];
  try {
    for (let i = 0; i < 100; i++) {
      const t0 = performance.now();
      writeSync(fd, `${'x'.repeat(299)}\n`);
      fdatasyncSync(fd);
      times.push(performance.now() - t0);
    }
  } finally {
    closeSync(fd);
  }
  times.sort((a, b) => a - b);
  return times[50] ?? NaN;
}

/** Trials per run of the batching matrix (RECALLSCAPE_BENCH_BATCH_TRIALS scales both). */
const MATRIX_SCALE = Number(process.env['RECALLSCAPE_BENCH_BATCH_TRIALS'] ?? 1);
const MATRIX = [
  {
    kind: 'no-op',
    trials: Math.round(4_000 * MATRIX_SCALE),
    text: (name: string, reps: number) =>
      `name: ${name}\nmodel: no-op\nreplicates: ${reps}\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n`,
  },
  {
    kind: 'tiny model (bcpnn 4 x 4)',
    trials: Math.round(3_000 * MATRIX_SCALE),
    text: (name: string, reps: number) =>
      `name: ${name}\nmodel: bcpnn-sequences\nreplicates: ${reps}\nfixed: { hypercolumns: 4, minicolumns: 4, sequenceLength: 3, recallDuration: 200 }\nvary:\n  patternOverlap: { from: 0, to: 0.5, steps: 100 }\n`,
  },
] as const;

interface RedisCost {
  /** used_cpu_sys + used_cpu_user, seconds. */
  readonly cpu: number;
  /** Sum of usec over INFO commandstats, microseconds. */
  readonly commandUsec: number;
}

async function redisCost(client: Redis): Promise<RedisCost> {
  const cpu = await client.info('cpu');
  const sys = Number(/used_cpu_sys:([\d.]+)/.exec(cpu)?.[1] ?? NaN);
  const user = Number(/used_cpu_user:([\d.]+)/.exec(cpu)?.[1] ?? NaN);
  const stats = await client.info('commandstats');
  let usec = 0;
  for (const m of stats.matchAll(/usec=(\d+),/g)) usec += Number(m[1]);
  return { cpu: sys + user, commandUsec: usec };
}

/** Finished trials of a queue: the trial counts in the names of its completed jobs. */
async function finishedTrials(client: Redis, prefix: string, queue: string): Promise<number> {
  const ids = await client.zrange(`${prefix}:${queue}:completed`, 0, '-1');
  if (ids.length === 0) return 0;
  const pipeline = client.pipeline();
  for (const id of ids) pipeline.hget(`${prefix}:${queue}:${id}`, 'name');
  let total = 0;
  for (const [, name] of (await pipeline.exec()) ?? []) total += Number(/#(\d+)$/.exec(String(name))?.[1] ?? 1);
  return total;
}

async function batchRun(
  url: string,
  client: Redis,
  root: string,
  model: (typeof MATRIX)[number],
  workers: number,
  batching: boolean,
  sharedDisk: boolean,
): Promise<void> {
  const tag = randomBytes(3).toString('hex');
  const settings = queueSettings({ redis: url, queue: `bench-${tag}`, prefix: `rsb${tag}`, connectTimeout: '10000' });
  const name = `batch-${tag}`;
  const file = join(root, `${name}.yaml`);
  await writeFile(file, model.text(name, Math.max(1, Math.round(model.trials / 100))));
  const coordinator = join(root, `coord-${tag}`);
  const procs = Array.from({ length: workers }, (_, i) =>
    startWorker(url, settings, sharedDisk ? coordinator : join(root, `disk-${tag}-${i}`), 'auto'),
  );
  await Promise.all(procs.map((p) => p.ready));
  const base = await usedMemory(client);
  const before = await redisCost(client);
  // Workers are running: jobs start as they arrive, so memory per queued trial is taken on a paused queue.
  const controlClient = new Redis(url, { maxRetriesPerRequest: null });
  const control = new Queue(settings.queue.name, { connection: controlClient, prefix: settings.queue.prefix });
  await control.pause();
  const t0 = performance.now();
  const submitted = await submitSweep(file, coordinator, settings, undefined, batching ? {} : { batch: 1 });
  const queued = await usedMemory(client);
  await control.resume();
  await control.close();
  controlClient.disconnect();
  const t1 = performance.now();
  const trials = submitted.enqueued;
  if (sharedDisk) {
    const store = (await import('../shared/store/result-store.js')).ResultStore.open(join(coordinator, name));
    while ((await store.completedKeys()).size < trials) await sleep(100);
  } else {
    while ((await finishedTrials(client, settings.queue.prefix, settings.queue.name)) < trials) await sleep(100);
  }
  const seconds = (performance.now() - t1) / 1000;
  const after = await redisCost(client);
  const finished = await usedMemory(client);
  // The event stream copies each completed job's return value, but keeps only about 100 to 200
  // entries whatever the sweep's size: told apart, as it does not grow with the trials.
  const stream = Number(
    (await client.call('MEMORY', 'USAGE', `${settings.queue.prefix}:${settings.queue.name}:events`, 'SAMPLES', '0')) ??
      0,
  );
  await Promise.all(procs.map((p) => stopWorker(p.child)));
  const cpuMs = ((after.cpu - before.cpu) * 1000) / trials;
  const cmdMs = (after.commandUsec - before.commandUsec) / 1000 / trials;
  console.log(
    `  ${model.kind.padEnd(24)} ${String(workers)} worker(s)  batch ${String(submitted.batchSize).padStart(4)}${sharedDisk ? ' shared disk' : ''}: ` +
      `${(trials / seconds).toFixed(0).padStart(5)} trials/s; Redis CPU ${cpuMs.toFixed(4)} ms/trial (commands ${cmdMs.toFixed(4)}); ` +
      `${((queued - base) / trials).toFixed(0)} B per queued trial, ${((finished - base) / trials).toFixed(0)} B per finished trial ${sharedDisk ? '(left as they completed)' : 'not gathered'}` +
      `, ${((finished - base - stream) / trials).toFixed(0)} B without the event stream (${(stream / 1024).toFixed(0)} KiB, bounded)` +
      ` [${trials} trials, submit ${((t1 - t0) / 1000).toFixed(1)} s]`,
  );
  await deleteKeys(client, settings.queue.prefix);
}

export async function run(): Promise<void> {
  await registerModelFolders([TEST_MODELS]);
  const server = await startServer();
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-queue-'));
  const client = new Redis(server.url, { maxRetriesPerRequest: 2 });
  try {
    console.log(
      `  Redis: ${server.own ? 'a redis-server of its own' : 'the shared server (figures include other traffic)'}; workers run 1 thread each, prefetch auto`,
    );
    const only = process.env['RECALLSCAPE_BENCH_QUEUE_ONLY'];
    if (only !== 'tiny') {
      console.log('  trials per queue job, off (1) and on (sized from the calibrated cost, about 1.5 s a job):');
      for (const model of MATRIX) {
        for (const workers of [1, 4]) {
          for (const batching of [false, true])
            await batchRun(server.url, client, root, model, workers, batching, false);
        }
      }
      await batchRun(server.url, client, root, MATRIX[0], 4, true, true);
    }
    if (only !== 'matrix') await compareTinyJobs({ url: server.url, client });
  } finally {
    client.disconnect();
    await server.stop();
    await rm(root, { recursive: true, force: true });
  }
  if (process.env['RECALLSCAPE_BENCH_QUEUE_FULL'] === '1') await earlierFigures();
}

async function earlierFigures(): Promise<void> {
  const server = await startServer();
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-queue-'));
  const client = new Redis(server.url, { maxRetriesPerRequest: 2 });
  const tag = randomBytes(3).toString('hex');
  const prefix = `rsb${tag}`;
  try {
    console.log(
      `  Redis: ${server.own ? 'a redis-server of its own' : 'the shared server (memory figures include other traffic)'}; no-op model`,
    );
    baseline = await usedMemory(client);

    const big = join(root, 'big.yaml');
    await writeFile(
      big,
      `name: bench-submit\nmodel: no-op\nreplicates: ${SUBMIT_JOBS / 100}\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n`,
    );
    const settings = queueSettings({ redis: server.url, queue: `bench-${tag}`, prefix, connectTimeout: '10000' });
    let t0 = performance.now();
    const first = await submitSweep(big, join(root, 'submit'), settings, undefined, { batch: 1 });
    const firstMs = ms(t0);
    const waiting = await usedMemory(client);
    t0 = performance.now();
    const second = await submitSweep(big, join(root, 'submit'), settings, undefined, { batch: 1 });
    const secondMs = ms(t0);
    console.log(
      `  submit ${first.enqueued} jobs: ${(firstMs / 1000).toFixed(2)} s (${(first.enqueued / (firstMs / 1000)).toFixed(0)} jobs/s)`,
    );
    console.log(
      `  submit the same sweep again: ${(secondMs / 1000).toFixed(2)} s, ${second.enqueued} added, ${second.inQueue} already queued`,
    );
    console.log(
      `  Redis memory: ${((waiting - baseline) / (first.enqueued / 1000) / 1024).toFixed(1)} KiB per 1,000 waiting jobs (${((waiting - baseline) / 2 ** 20).toFixed(1)} MB for ${first.enqueued})`,
    );
    t0 = performance.now();
    const cancelled = await cancelSweep(join(root, 'submit', 'bench-submit'), settings, undefined);
    console.log(`  cancel ${cancelled.removed} waiting jobs: ${(ms(t0) / 1000).toFixed(2)} s`);
    await deleteKeys(client, prefix);

    const small = join(root, 'run.yaml');
    await writeFile(
      small,
      `name: bench-run\nmodel: no-op\nreplicates: ${Math.max(1, Math.round(RUN_JOBS / 100))}\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n`,
    );
    console.log(`  queue path, ${RUN_JOBS} no-op jobs (records fdatasync'ed before each acknowledgement):`);
    console.log(
      `  (one append + fdatasync on this disk takes ${(await syncLatency(root)).toFixed(2)} ms now: part of every job's overhead)`,
    );
    baseline = await usedMemory(client);
    for (const prefetch of ['auto', 0, 4] as const) {
      await throughput(server.url, client, 1, prefetch, root, small);
      await throughput(server.url, client, 2, prefetch, root, small);
    }
  } finally {
    await deleteKeys(client, prefix).catch(() => undefined);
    client.disconnect();
    await server.stop();
    await rm(root, { recursive: true, force: true });
  }
}
