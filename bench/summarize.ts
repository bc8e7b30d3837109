/**
 * Section "summarize": time and peak memory to build the full report
 * (tables, diagrams, PNGs, index.html) from 1,000,000 result records.
 * Setup writes a grid sweep of 11 x 4 x 2 points x 11,364 replicates into a
 * temporary sweep folder: real sweep.json and real job keys, record lines
 * shaped like bcpnn-sequences results, in four shards as four writers would
 * leave them. The report then runs in a child process so its peak memory is
 * measured alone: RSS sampled every 25 ms and the kernel's maxRSS.
 * Goals (issue 5): under 30 s and under 500 MB.
 */
import { spawn } from 'node:child_process';
import { once } from 'node:events';
import { createWriteStream } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildReport } from '../coordinator/summarize/build-report.js';
import { createRandom } from '../shared/random.js';
import type { ResultRecord } from '../shared/schemas/records.js';
import { ResultStore } from '../shared/store/result-store.js';
import { expandJobs } from '../shared/sweep/expand.js';
import { parseSweepText } from '../shared/sweep/load.js';

const REPLICATES = 11_364;
const SHARDS = 4;
const GOAL_MS = 30_000;
const GOAL_MB = 500;

const SWEEP = `
name: bench-summarize
model: bcpnn-sequences
seed: 7
replicates: ${REPLICATES}
fixed: { hypercolumns: 10, minicolumns: 20, sequenceLength: 6 }
vary:
  patternOverlap: { from: 0, to: 1, steps: 11 }
  overlapLength: { list: [0, 1, 2, 3] }
  tauZPre: { list: [50, 100] }
report: { x: patternOverlap, y: overlapLength, facet: tauZPre }
`;

interface ChildFigures {
  readonly ms: number;
  /** CPU time of the child (user + system): the figure that load on a shared machine does not inflate. */
  readonly cpuMs: number;
  readonly sampledPeakRss: number;
  readonly maxRssKiB: number;
  readonly completed: number;
  readonly files: number;
}

/** Write the synthetic sweep folder; returns its path and the record count. */
export async function writeFixture(root: string): Promise<{ dir: string; records: number }> {
  const sweep = parseSweepText(SWEEP, 'bench-summarize.yaml', { jobLimit: 2_000_000 });
  const store = ResultStore.at(root, sweep.spec.name);
  await store.prepare(sweep);
  const streams = Array.from({ length: SHARDS }, (_, i) =>
    createWriteStream(join(store.resultsDir, `bench-host-${i}.ndjson`)),
  );
  const rng = createRandom(1, 'bench');
  let count = 0;
  let buffers: string[][] = streams.map(() => []);
  const flush = async (): Promise<void> => {
    await Promise.all(
      streams.map(async (s, i) => {
        const lines = buffers[i] ?? [];
        if (lines.length > 0 && !s.write(lines.join(''))) await once(s, 'drain');
      }),
    );
    buffers = streams.map(() => []);
  };
  for (const job of expandJobs(sweep)) {
    const overlap = job.point['patternOverlap'] as number;
    const length = job.point['overlapLength'] as number;
    // A plausible outcome: failure grows with overlap once sequences share positions.
    const success = rng.uniform() > (length === 0 ? 0.02 : overlap * overlap);
    const prefix = success ? 6 : Math.floor(rng.uniform() * 6);
    const record: ResultRecord = {
      v: 1,
      key: job.key,
      sweepHash: sweep.hash,
      model: sweep.model.id,
      modelVersion: sweep.model.version,
      replicate: job.replicate,
      seed: job.seed,
      point: job.point,
      metrics: {
        success,
        recalledFraction: success ? 1 : rng.uniform() < 0.5 ? 0.5 : 0,
        meanCorrectPrefix: prefix,
        meanDwellMs: 80 + rng.uniform() * 60,
        achievedOverlap: overlap,
        diverged: false,
        distinctPatterns: 12,
        correctPrefix: [6, prefix],
        firstError: [null, success ? null : prefix],
      },
      writer: `bench-host-${count % SHARDS}`,
      run: 'bench-run',
      finishedAt: '2026-12-01T12:00:00.000Z',
      elapsedMs: 11.5 + rng.uniform(),
    };
    buffers[count % SHARDS]?.push(`${JSON.stringify(record)}\n`);
    count += 1;
    if (count % 20_000 === 0) await flush();
  }
  await flush();
  await Promise.all(streams.map((s) => new Promise<void>((resolve) => s.end(resolve))));
  return { dir: store.dir, records: count };
}

/** Child mode: build the report once and print the figures as JSON. */
async function child(dir: string): Promise<void> {
  let peak = process.memoryUsage.rss();
  const timer = setInterval(() => {
    peak = Math.max(peak, process.memoryUsage.rss());
  }, 25);
  const started = performance.now();
  const cpu0 = process.cpuUsage();
  const result = await buildReport({ dir });
  const ms = performance.now() - started;
  const cpu = process.cpuUsage(cpu0);
  clearInterval(timer);
  peak = Math.max(peak, process.memoryUsage.rss());
  const figures: ChildFigures = {
    ms,
    cpuMs: (cpu.user + cpu.system) / 1000,
    sampledPeakRss: peak,
    maxRssKiB: process.resourceUsage().maxRSS,
    completed: result.completedJobs,
    files: result.files.length,
  };
  process.stdout.write(`${JSON.stringify(figures)}\n`);
}

export function runChild(dir: string): Promise<ChildFigures> {
  const self = fileURLToPath(import.meta.url);
  return new Promise((resolve, reject) => {
    const proc = spawn(process.execPath, [self, '--child', dir], { stdio: ['ignore', 'pipe', 'inherit'] });
    let out = '';
    proc.stdout.on('data', (d: Buffer) => (out += d.toString()));
    proc.on('error', reject);
    proc.on('close', (code) => {
      if (code !== 0) reject(new Error(`summarize child exited with ${code}`));
      else resolve(JSON.parse(out.trim().split('\n').pop() ?? '{}') as ChildFigures);
    });
  });
}

export async function run(): Promise<void> {
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-summarize-'));
  try {
    const t0 = performance.now();
    const { dir, records } = await writeFixture(root);
    console.log(
      `setup: ${records} records (88 points x ${REPLICATES} replicates, ${SHARDS} shards) written in ${((performance.now() - t0) / 1000).toFixed(1)} s`,
    );
    const f = await runChild(dir);
    const mb = (bytes: number): number => bytes / 2 ** 20;
    const maxRssMb = f.maxRssKiB / 1024;
    console.log(
      `report of ${f.completed} records (${f.files} files): ${(f.ms / 1000).toFixed(2)} s wall, ${(f.cpuMs / 1000).toFixed(2)} s CPU (goal < ${GOAL_MS / 1000} s wall: ${f.ms < GOAL_MS ? 'met' : 'NOT met'}${f.cpuMs < f.ms * 0.8 ? '; wall well above CPU: the machine is busy' : ''})`,
    );
    console.log(
      `peak memory of the report process: sampled RSS ${mb(f.sampledPeakRss).toFixed(0)} MB, maxRSS ${maxRssMb.toFixed(0)} MB (goal < ${GOAL_MB} MB: ${Math.max(maxRssMb, mb(f.sampledPeakRss)) < GOAL_MB ? 'met' : 'NOT met'})`,
    );
    console.log(`throughput: ${Math.round(f.completed / (f.ms / 1000)).toLocaleString('en-US')} records/s`);
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

// Run as `node dist/bench/summarize.js --child DIR` by run() above.
if (process.argv[2] === '--child' && process.argv[1] === fileURLToPath(import.meta.url)) {
  const dir = process.argv[3];
  if (dir === undefined) throw new Error('--child needs a sweep folder');
  await child(dir);
}
