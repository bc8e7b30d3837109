/**
 * Jobs per second of the embedded runner (thread pool + result shards) on the
 * demo sweep, with 1 and 2 threads. Each run starts from an empty temporary
 * folder. The demo's replicates are cut down (same points, fewer trials per
 * point) so the section takes about a minute; set RECALLSCAPE_BENCH_REPLICATES
 * to change that.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { DEMO_SWEEP_YAML } from '../coordinator/demo-sweep.js';
import { runSweep } from '../coordinator/run-sweep.js';
import { createLogger } from '../shared/logger.js';
import { countJobs } from '../shared/sweep/expand.js';
import { parseSweepText } from '../shared/sweep/load.js';
import { compareTinyJobs } from './tiny-jobs.js';

interface Measurement {
  readonly threads: number;
  readonly jobs: number;
  readonly seconds: number;
  /** Jobs per second from start to end, thread start-up included. */
  readonly overall: number;
  /** Jobs per second between the first and the last finished job. */
  readonly steady: number;
}

const silent = createLogger({
  name: 'bench',
  level: 'warn',
  destination: new Writable({ write: (_c, _e, done) => done() }),
});

async function measure(yaml: string, threads: number): Promise<Measurement> {
  const sweep = parseSweepText(yaml, 'demo (bench)');
  const root = await mkdtemp(join(tmpdir(), 'rs-bench-embedded-'));
  try {
    let firstAt = 0;
    let firstCount = 0;
    let lastAt = 0;
    let lastCount = 0;
    const started = performance.now();
    const result = await runSweep({
      sweep,
      root,
      threads,
      logger: silent,
      onProgress: (p) => {
        const finished = p.succeeded + p.failed;
        if (finished === lastCount) return;
        const now = performance.now();
        if (firstCount === 0) {
          firstAt = now;
          firstCount = finished;
        }
        lastAt = now;
        lastCount = finished;
      },
    });
    const seconds = (performance.now() - started) / 1000;
    if (result.failed > 0) throw new Error(`${result.failed} bench jobs failed; see ${result.failuresDir}`);
    const steadySeconds = (lastAt - firstAt) / 1000;
    return {
      threads,
      jobs: result.ran,
      seconds,
      overall: result.ran / seconds,
      steady: steadySeconds > 0 ? (lastCount - firstCount) / steadySeconds : Number.NaN,
    };
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

export async function run(): Promise<void> {
  const replicates = Number(process.env['RECALLSCAPE_BENCH_REPLICATES'] ?? '4');
  if (!Number.isInteger(replicates) || replicates < 1)
    throw new Error('RECALLSCAPE_BENCH_REPLICATES must be a whole number >= 1');
  const yaml = DEMO_SWEEP_YAML.replace(/^replicates: \d+$/m, `replicates: ${replicates}`);
  const jobs = countJobs(parseSweepText(yaml, 'demo (bench)'));
  console.log(`demo sweep points with ${replicates} replicates each: ${jobs} jobs per measurement`);
  const results: Measurement[] = [];
  for (const threads of [1, 2]) {
    const m = await measure(yaml, threads);
    results.push(m);
    console.log(
      `${threads} thread${threads === 1 ? ' ' : 's'}: ${m.jobs} jobs in ${m.seconds.toFixed(2)} s = ${m.overall.toFixed(1)} jobs/s overall, ` +
        `${m.steady.toFixed(1)} jobs/s from first to last result`,
    );
  }
  const [one, two] = results as [Measurement, Measurement];
  console.log(
    `2-thread / 1-thread: ${(two.overall / one.overall).toFixed(2)}x overall, ${(two.steady / one.steady).toFixed(2)}x steady (goal >= 1.8x on 2 idle cores)`,
  );
  await compareTinyJobs(undefined);
}
