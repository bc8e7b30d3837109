/**
 * Tiny trials (the no-op model, and a 4 x 4 network) through the embedded
 * runner and a queue worker, before group commit (bench/commit-baseline.ts)
 * and now, one trial a job and batched, measured alternately in one process
 * so that the machine's load hits all alike. Figures per run: trials/s from
 * the first to the last finished trial, and CPU time per trial (whole
 * process, every thread) over the trials after the first 5%, which leaves
 * start-up out. CPU time is the figure to trust on a shared
 * machine: wall time also counts waiting for a core.
 *
 * With a queue, the embedded runner also runs as `recallscape run` in a
 * process of its own, measured as the worker is: the worker / embedded
 * ratio compares those two, since a fresh process warms up where the bench
 * process is already warm.
 *
 * RECALLSCAPE_BENCH_TINY_JOBS sets the no-op trials per run (default 10,000;
 * the tiny model runs 0.3 times as many); RECALLSCAPE_BENCH_TINY_NOW_ONLY=1
 * keeps only the batched worker and the embedded runner in its own process,
 * for long runs.
 */
import { spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtemp, readdir, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { setTimeout as sleep } from 'node:timers/promises';
import { fileURLToPath } from 'node:url';
import type { Redis } from 'ioredis';
import { queueSettings } from '../coordinator/queue-session.js';
import { runSweep } from '../coordinator/run-sweep.js';
import { submitSweep } from '../coordinator/submit-sweep.js';
import { createLogger } from '../shared/logger.js';
import { MODELS_ENV, registerModelFolders } from '../shared/models/external/model-folders.js';
import { countJobs } from '../shared/sweep/expand.js';
import { parseSweepText } from '../shared/sweep/load.js';
import { runEmbeddedBaseline } from './commit-baseline.js';

const CLI = fileURLToPath(new URL('../../bin/recallscape.js', import.meta.url));
const BASELINE_WORKER = fileURLToPath(new URL('./baseline-worker.js', import.meta.url));
/** The no-op model is a test model (a module model): this process and the workers load it. */
const TEST_MODELS = fileURLToPath(new URL('../../test/fixtures/models', import.meta.url));
/** Jobs before the CPU window opens: thread and module start-up stay outside it. */
const WARM_SHARE = 0.05;
/** Linux clock ticks per second (getconf CLK_TCK), the unit of /proc/<pid>/stat times. */
const CLOCK_TICKS = 100;

export type Version = 'before' | 'now';

export interface TinyRun {
  readonly jobs: number;
  /** Jobs per second between the first and the last finished job. */
  readonly rate: number;
  /** CPU milliseconds per job of the whole process (all its threads) after the first 5% of jobs. */
  readonly cpuMsPerJob: number;
}

const silent = createLogger({
  name: 'bench',
  level: 'warn',
  destination: new Writable({ write: (_c, _e, done) => done() }),
});

/** The two kinds of tiny job: all overhead, and a trial of the real model that costs about a millisecond. */
export type JobKind = 'no-op' | 'tiny model';

export const KIND_HELP: Record<JobKind, string> = {
  'no-op': 'no-op model: every millisecond is overhead',
  'tiny model':
    'bcpnn-sequences, 4 x 4 units, one sequence of 3 patterns, no noise: about 0.2 ms of model per trial (0.5 ms before model 1.2.0)',
};

/** A sweep of `kind` with about `jobs` jobs. */
export function tinySweepYaml(name: string, jobs: number, kind: JobKind = 'no-op'): string {
  if (kind === 'tiny model')
    return `name: ${name}\nmodel: bcpnn-sequences\nseed: 3\nreplicates: ${jobs}\nfixed: { hypercolumns: 4, minicolumns: 4, sequenceLength: 3, sequenceCount: 1 }\n`;
  return `name: ${name}\nmodel: no-op\nseed: 3\nreplicates: ${Math.max(1, Math.round(jobs / 100))}\nvary:\n  value: { from: 1, to: 100, steps: 100 }\n`;
}

const cpuMs = (): number => {
  const { user, system } = process.cpuUsage();
  return (user + system) / 1000;
};

/** The embedded runner on `jobs` no-op jobs in a fresh folder. */
export async function embeddedTiny(
  version: Version,
  threads: number,
  jobs: number,
  kind: JobKind = 'no-op',
): Promise<TinyRun> {
  const sweep = parseSweepText(tinySweepYaml('bench-tiny', jobs, kind), 'tiny (bench)');
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-tiny-'));
  const warm = Math.ceil(jobs * WARM_SHARE);
  let firstAt = 0;
  let lastAt = 0;
  let finished = 0;
  let warmCpu = 0;
  let warmCount = 0;
  const seen = (count: number): void => {
    if (count === finished) return;
    const now = performance.now();
    if (finished === 0) firstAt = now;
    if (warmCount === 0 && count >= warm) {
      warmCpu = cpuMs();
      warmCount = count;
    }
    finished = count;
    lastAt = now;
  };
  try {
    if (version === 'before') await runEmbeddedBaseline(sweep, root, threads, seen);
    else
      await runSweep({
        sweep,
        root,
        threads,
        logger: silent,
        onProgress: (p) => seen(p.succeeded + p.failed),
      });
    const cpu = cpuMs() - warmCpu;
    return {
      jobs: finished,
      rate: (finished - 1) / ((lastAt - firstAt) / 1000),
      cpuMsPerJob: cpu / (finished - warmCount),
    };
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

/**
 * The embedded runner as users start it, `recallscape run` in a process of
 * its own, on `jobs` tiny trials in a fresh folder: measured as the queue
 * worker is (rates from the records, CPU from /proc), so that neither has
 * the bench process's warm compiled code on its side.
 */
export async function embeddedProcessTiny(threads: number, jobs: number, kind: JobKind = 'no-op'): Promise<TinyRun> {
  const { root, file, planned, out, resultsDir } = await tinyFolder('rs-bench-tinyp-', jobs, kind);
  try {
    const args = [CLI, 'run', file, '--out', out, '--threads', String(threads), '--no-report', '--models', TEST_MODELS];
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr?.on('data', (d: Buffer) => {
      stderr += d.toString();
    });
    let exited = false;
    const closed = new Promise<number | null>((done) =>
      child.once('close', (code) => {
        exited = true;
        done(code);
      }),
    );
    const pid = child.pid as number;
    // (bytes written, CPU so far) every 20 ms while the process lives; the last sample is the end.
    const samples: Sample[] = [];
    while (!exited) {
      try {
        samples.push({ bytes: await recordBytes(resultsDir), cpu: await processCpuMs(pid) });
      } catch {
        // The process ended between the check and the read.
      }
      await sleep(20);
    }
    const code = await closed;
    if (code !== 0) throw new Error(`recallscape run exited with ${String(code)}: ${stderr.slice(-500)}`);
    return await runFigures(resultsDir, planned, samples, samples[samples.length - 1]);
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

/** Bytes of records written and CPU time of the process so far (ms), at one moment of a run. */
interface Sample {
  readonly bytes: number;
  readonly cpu: number;
}

/** A fresh folder with the sweep file of `jobs` tiny trials of `kind`, and where its records go. */
export async function tinyFolder(
  prefix: string,
  jobs: number,
  kind: JobKind,
): Promise<{ root: string; file: string; planned: number; out: string; resultsDir: string }> {
  const root = await mkdtemp(join(tmpdir(), prefix));
  const file = join(root, 'tiny.yaml');
  const yaml = tinySweepYaml('bench-tiny', jobs, kind);
  const planned = countJobs(parseSweepText(yaml, 'tiny (bench)'));
  await writeFile(file, yaml);
  const out = join(root, 'out');
  return { root, file, planned, out, resultsDir: join(out, 'bench-tiny', 'results') };
}

/**
 * A child process's figures from its records and CPU samples: trials/s
 * between the first and the last finished trial, and CPU per trial from the
 * sample where WARM_SHARE of the records' bytes were written to `end`.
 */
async function runFigures(
  resultsDir: string,
  planned: number,
  samples: readonly Sample[],
  end: Sample | undefined,
): Promise<TinyRun> {
  const records = await readRecords(resultsDir);
  if (records.count !== planned) throw new Error(`${records.count} of ${planned} trials recorded`);
  const last = end ?? { bytes: records.bytes, cpu: Number.NaN };
  const warm = samples.find((x) => x.bytes >= records.bytes * WARM_SHARE) ?? last;
  const windowTrials = (last.bytes - warm.bytes) / (records.bytes / records.count);
  return {
    jobs: planned,
    rate: (planned - 1) / ((records.last - records.first) / 1000),
    cpuMsPerJob: windowTrials > 0 ? (last.cpu - warm.cpu) / windowTrials : Number.NaN,
  };
}

/**
 * User plus system CPU of a process and all its threads, in ms, from
 * /proc/<pid>/stat; with `reapedChildren`, that of its children that ended
 * and were waited for instead (cutime and cstime).
 */
export async function processCpuMs(pid: number | 'self', reapedChildren = false): Promise<number> {
  const stat = await readFile(`/proc/${pid}/stat`, 'utf8');
  const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
  // utime, stime, cutime and cstime are fields 14 to 17 of the line, 12 to 15 after the command name.
  const at = reapedChildren ? 13 : 11;
  return ((Number(fields[at]) + Number(fields[at + 1])) * 1000) / CLOCK_TICKS;
}

/** Trials a run's records hold, and the first and last finishedAt among them (ms). */
export async function readRecords(dir: string): Promise<{ count: number; first: number; last: number; bytes: number }> {
  let count = 0;
  let first = Number.POSITIVE_INFINITY;
  let last = Number.NEGATIVE_INFINITY;
  let bytes = 0;
  for (const name of await readdir(dir).catch(() => [] as string[])) {
    if (!name.endsWith('.ndjson')) continue;
    const text = await readFile(join(dir, name), 'utf8');
    bytes += Buffer.byteLength(text);
    for (const line of text.split('\n')) {
      if (line === '') continue;
      const at = Date.parse((JSON.parse(line) as { finishedAt: string }).finishedAt);
      count++;
      if (at < first) first = at;
      if (at > last) last = at;
    }
  }
  return { count, first, last, bytes };
}

/** Bytes of the records written so far (one stat per shard file: cheap enough to poll). */
async function recordBytes(dir: string): Promise<number> {
  let bytes = 0;
  for (const name of await readdir(dir).catch(() => [] as string[])) {
    if (name.endsWith('.ndjson')) bytes += (await stat(join(dir, name))).size;
  }
  return bytes;
}

/** Jobs not yet finished: waiting, running or held, delayed, prioritised. */
export async function unfinished(client: Redis, base: string): Promise<number> {
  const [wait, active, delayed, prioritized] = await Promise.all([
    client.llen(`${base}:wait`),
    client.llen(`${base}:active`),
    client.zcard(`${base}:delayed`),
    client.zcard(`${base}:prioritized`),
  ]);
  return wait + active + delayed + prioritized;
}

/**
 * One worker process (`worker --threads n`, or the old one) serving `jobs`
 * tiny trials submitted before it starts, on the coordinator's disk (the
 * default set-up of the docs), `batch` trials per queue job ('auto': sized
 * by submit, as users get it). Finished trials are counted from the records
 * on disk, so jobs that leave Redis as they complete are counted too.
 */
export async function queueTiny(
  version: Version,
  threads: number,
  jobs: number,
  url: string,
  client: Redis,
  kind: JobKind = 'no-op',
  batch: number | 'auto' = 1,
): Promise<TinyRun> {
  const { root, file, planned, out, resultsDir } = await tinyFolder('rs-bench-tinyq-', jobs, kind);
  const tag = randomBytes(3).toString('hex');
  const settings = queueSettings({
    redis: url,
    queue: `bench-tiny-${tag}`,
    prefix: `rsbt${tag}`,
    connectTimeout: '10000',
  });
  try {
    await submitSweep(file, out, settings, undefined, batch === 'auto' ? {} : { batch });
    const args =
      version === 'before'
        ? [BASELINE_WORKER, url, settings.queue.name, settings.queue.prefix, out, String(threads)]
        : [
            CLI,
            'worker',
            '--redis',
            url,
            '--threads',
            String(threads),
            '--out',
            out,
            '--queue',
            settings.queue.name,
            '--prefix',
            settings.queue.prefix,
          ];
    const child = spawn(process.execPath, args, {
      stdio: ['ignore', 'ignore', 'pipe'],
      env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'info', [MODELS_ENV]: TEST_MODELS },
    });
    const closed = new Promise((done) => child.once('close', done));
    try {
      await new Promise<void>((done, fail) => {
        let text = '';
        child.stderr?.on('data', (d: Buffer) => {
          text += d.toString();
          if (text.includes('worker ready')) done();
        });
        child.once('close', () => fail(new Error(`worker exited early: ${text.slice(-500)}`)));
      });
      const pid = child.pid as number;
      const base = `${settings.queue.prefix}:${settings.queue.name}`;
      // (bytes written, CPU so far) every 20 ms: the CPU window opens at the
      // sample where 5% of the final bytes were written.
      const samples: Sample[] = [];
      for (;;) {
        samples.push({ bytes: await recordBytes(resultsDir), cpu: await processCpuMs(pid) });
        if ((await unfinished(client, base)) === 0) break;
        await sleep(20);
      }
      const end = { bytes: await recordBytes(resultsDir), cpu: await processCpuMs(pid) };
      return await runFigures(resultsDir, planned, samples, end);
    } finally {
      child.kill('SIGTERM');
      await closed;
    }
  } finally {
    await deleteKeys(client, settings.queue.prefix);
    await rm(root, { recursive: true, force: true });
  }
}

export async function deleteKeys(client: Redis, prefix: string): Promise<void> {
  let cursor = '0';
  do {
    const [next, keys] = await client.scan(cursor, 'MATCH', `${prefix}:*`, 'COUNT', 1000);
    cursor = next;
    if (keys.length > 0) await client.del(...keys);
  } while (cursor !== '0');
}

export const median = (values: readonly number[]): number => {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1
    ? (sorted[mid] as number)
    : ((sorted[mid - 1] as number) + (sorted[mid] as number)) / 2;
};

export interface Contender {
  readonly label: string;
  readonly measure: () => Promise<TinyRun>;
}

/**
 * Runs every contender once per round, in turn, for `rounds` rounds; prints
 * each one's median rate and CPU per job with their ranges, and returns the medians.
 */
export async function sideBySide(
  contenders: readonly Contender[],
  rounds: number,
): Promise<Map<string, { rate: number; cpuMsPerJob: number }>> {
  const runs = new Map<string, TinyRun[]>(contenders.map((c) => [c.label, []]));
  for (let round = 0; round < rounds; round++) {
    for (const contender of contenders) runs.get(contender.label)?.push(await contender.measure());
  }
  const medians = new Map<string, { rate: number; cpuMsPerJob: number }>();
  for (const { label } of contenders) {
    const list = runs.get(label) ?? [];
    const rates = list.map((r) => r.rate);
    const cpus = list.map((r) => r.cpuMsPerJob);
    const m = { rate: median(rates), cpuMsPerJob: median(cpus) };
    medians.set(label, m);
    console.log(
      `  ${label.padEnd(36)} ${m.rate.toFixed(0).padStart(5)} trials/s (${Math.min(...rates).toFixed(0)}-${Math.max(...rates).toFixed(0)}), ` +
        `CPU ${m.cpuMsPerJob.toFixed(3)} ms/trial (${Math.min(...cpus).toFixed(3)}-${Math.max(...cpus).toFixed(3)}) = ${(1000 / m.cpuMsPerJob).toFixed(0)} trials per CPU-second`,
    );
  }
  return medians;
}

/**
 * Trials per run of each kind (RECALLSCAPE_BENCH_TINY_JOBS scales both: it
 * sets the no-op count). Enough for ten batches of the auto size (1,000
 * no-op trials a job): with only two, a run measures the start of the first
 * batch and the end of the last more than the steady rate.
 */
function jobsPerRun(kind: JobKind): number {
  const noOp = Number(process.env['RECALLSCAPE_BENCH_TINY_JOBS'] ?? 10_000);
  return kind === 'no-op' ? noOp : Math.max(100, Math.round(noOp * 0.3));
}

const ROUNDS = 3;

type Figures = { rate: number; cpuMsPerJob: number };
const ratio = (a: number, b: number): string => (a / b).toFixed(2);

/**
 * Tiny trials before group commit and now, side by side in this run, for
 * both kinds of tiny job and 1 and 2 threads. With `queue` (a Redis URL and
 * a client on it): one worker process with one trial a job (before and now)
 * and with batches sized as submit sizes them, and the embedded runner with
 * as many threads (before and now); without it, the embedded runner alone.
 */
export async function compareTinyJobs(queue: { url: string; client: Redis } | undefined): Promise<void> {
  await registerModelFolders([TEST_MODELS]);
  const indent = queue === undefined ? '' : '  ';
  if (process.env['RECALLSCAPE_BENCH_TINY_NOW_ONLY'] !== '1')
    console.log(
      `${indent}("before group commit" is this build with the durability of before, not an older build: the section "builds" times whole commands against one)`,
    );
  for (const kind of ['no-op', 'tiny model'] as const) {
    const jobs = jobsPerRun(kind);
    for (const threads of [1, 2]) {
      console.log(
        `${indent}tiny trials (${KIND_HELP[kind]}), ${jobs} per run, ${threads} thread${threads === 1 ? '' : 's'}` +
          `${queue === undefined ? '' : ' in one worker process and in the embedded runner'}; median (range) of ${ROUNDS} rounds, contenders alternating:`,
      );
      const contenders: Contender[] = [];
      if (queue !== undefined)
        contenders.push(
          {
            label: 'queue worker before group commit',
            measure: () => queueTiny('before', threads, jobs, queue.url, queue.client, kind, 1),
          },
          {
            label: 'queue worker now, 1 trial a job',
            measure: () => queueTiny('now', threads, jobs, queue.url, queue.client, kind, 1),
          },
          {
            label: 'queue worker now, batched (auto)',
            measure: () => queueTiny('now', threads, jobs, queue.url, queue.client, kind, 'auto'),
          },
        );
      contenders.push(
        { label: 'embedded before group commit', measure: () => embeddedTiny('before', threads, jobs, kind) },
        { label: 'embedded now', measure: () => embeddedTiny('now', threads, jobs, kind) },
      );
      if (queue !== undefined)
        contenders.push({
          label: 'embedded now, own process',
          measure: () => embeddedProcessTiny(threads, jobs, kind),
        });
      // RECALLSCAPE_BENCH_TINY_NOW_ONLY=1: the batched worker and the embedded runner alone (long runs).
      const nowOnly = process.env['RECALLSCAPE_BENCH_TINY_NOW_ONLY'] === '1';
      const chosen = nowOnly
        ? contenders.filter(
            (c) => c.label === 'queue worker now, batched (auto)' || c.label === 'embedded now, own process',
          )
        : contenders;
      const m = await sideBySide(chosen, ROUNDS);
      const get = (label: string): Figures => m.get(label) ?? { rate: Number.NaN, cpuMsPerJob: Number.NaN };
      const eb = get('embedded before group commit');
      const en = get('embedded now');
      const lines = [
        `embedded now / before: ${ratio(en.rate, eb.rate)}x trials/s, ${ratio(eb.cpuMsPerJob, en.cpuMsPerJob)}x trials per CPU-second`,
      ];
      if (queue !== undefined) {
        const qb = get('queue worker before group commit');
        const q1 = get('queue worker now, 1 trial a job');
        const qn = get('queue worker now, batched (auto)');
        lines.unshift(
          `queue worker batched now / before: ${ratio(qn.rate, qb.rate)}x trials/s, ${ratio(qb.cpuMsPerJob, qn.cpuMsPerJob)}x trials per CPU-second`,
          `queue worker 1 trial a job now / before: ${ratio(q1.rate, qb.rate)}x trials/s, ${ratio(qb.cpuMsPerJob, q1.cpuMsPerJob)}x trials per CPU-second`,
        );
        // Both in processes of their own, measured alike (embeddedProcessTiny).
        const ep = get('embedded now, own process');
        lines.push(
          `queue worker batched / embedded now, own process: ${ratio(qn.rate, ep.rate)} in trials/s, ${ratio(ep.cpuMsPerJob, qn.cpuMsPerJob)} in trials per CPU-second (goal 0.9 to 1.1)`,
          `queue worker 1 trial a job / embedded now, own process: ${ratio(q1.rate, ep.rate)} in trials/s, ${ratio(ep.cpuMsPerJob, q1.cpuMsPerJob)} in trials per CPU-second`,
        );
      }
      // A ratio with a contender left out says nothing.
      for (const line of lines) if (!line.includes('NaN')) console.log(`${indent}  ${line}`);
    }
  }
}
