/**
 * How long the command takes to start and finish for the things people type
 * most: `--version`, `--help`, `plan` of a small file (with and without timing
 * jobs), a one-job `run`, a queue command's `--help`, and how long `requeue`
 * takes to say that Redis is unreachable (a closed port on 127.0.0.1, with
 * --connect-timeout 1000 and with the default).
 *
 * Each case runs the real CLI as a child process several times (after one
 * warm-up) and prints the median and range of its wall time and of its CPU
 * time (user + system, every thread, read by the child itself at exit through
 * a preloaded hook), beside bare `node` for scale. Medians hold up on a
 * shared machine; CPU time less affected by other load than wall time.
 * RECALLSCAPE_BENCH_STARTUP_RUNS sets the runs per case (default 7);
 * RECALLSCAPE_BENCH_CLI runs another build's CLI instead.
 */
import { spawn } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';

// RECALLSCAPE_BENCH_CLI points at another build's bin/recallscape.js, for a before/after comparison.
const CLI = process.env['RECALLSCAPE_BENCH_CLI'] ?? resolve(import.meta.dirname, '..', '..', 'bin', 'recallscape.js');

// Written by the child as its last words: CPU microseconds of the whole process.
const MARK = 'rs-bench-cpu=';
const PRELOAD = `data:text/javascript,${encodeURIComponent(
  `process.on('exit', () => { const u = process.cpuUsage(); process.stderr.write('\\n${MARK}' + (u.user + u.system) + '\\n'); });`,
)}`;

interface Sample {
  readonly wallMs: number;
  readonly cpuMs: number;
  readonly code: number | null;
  readonly stderr: string;
}

function once(args: readonly string[], cwd: string, env: NodeJS.ProcessEnv): Promise<Sample> {
  return new Promise((done, fail) => {
    const started = performance.now();
    const child = spawn(process.execPath, ['--import', PRELOAD, ...args], {
      cwd,
      env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'warn', ...env },
      stdio: ['ignore', 'ignore', 'pipe'],
    });
    let stderr = '';
    child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
    child.on('error', fail);
    child.on('close', (code) => {
      const wallMs = performance.now() - started;
      const match = new RegExp(`${MARK}(\\d+)`).exec(stderr);
      if (match?.[1] === undefined) {
        fail(new Error(`no CPU figure from: node ${args.join(' ')}\n${stderr}`));
        return;
      }
      done({
        wallMs,
        cpuMs: Number(match[1]) / 1000,
        code,
        stderr: stderr.replace(new RegExp(`\\n?${MARK}\\d+\\n`), ''),
      });
    });
  });
}

function median(values: readonly number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? (sorted[mid] ?? 0) : ((sorted[mid - 1] ?? 0) + (sorted[mid] ?? 0)) / 2;
}

const seconds = (ms: number) => (ms / 1000).toFixed(2);

interface Case {
  readonly label: string;
  readonly args: readonly string[];
  readonly expectCode: number;
  readonly env?: NodeJS.ProcessEnv;
  readonly runs?: number;
}

/** A port on 127.0.0.1 that nothing listens on: connecting is refused at once. */
async function closedPort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((ok) => server.listen(0, '127.0.0.1', ok));
  const address = server.address();
  await new Promise<void>((ok) => server.close(() => ok()));
  if (address === null || typeof address === 'string') throw new Error('no port');
  return address.port;
}

export async function run(): Promise<void> {
  const runs = Number(process.env['RECALLSCAPE_BENCH_STARTUP_RUNS'] ?? '7');
  if (!Number.isInteger(runs) || runs < 1)
    throw new Error('RECALLSCAPE_BENCH_STARTUP_RUNS must be a whole number >= 1');
  const dir = await mkdtemp(join(tmpdir(), 'rs-bench-startup-'));
  try {
    const small = join(dir, 'small.yaml');
    await writeFile(
      small,
      [
        'name: small',
        'seed: 1',
        'replicates: 2',
        'fixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4 }',
        'vary:',
        '  patternOverlap: { list: [0, 0.5, 1] }',
        '',
      ].join('\n'),
    );
    const one = join(dir, 'one.yaml');
    await writeFile(one, 'name: one\nseed: 1\nfixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4 }\n');
    // A finished sweep folder for requeue, made by the CLI itself.
    const made = await once([CLI, 'run', small, '--out', join(dir, 'made')], dir, {});
    if (made.code !== 0) throw new Error(`could not make a sweep folder: ${made.stderr}`);
    const redis = `redis://127.0.0.1:${await closedPort()}`;

    const cases: Case[] = [
      { label: 'node -e 0 (bare node, for scale)', args: ['-e', '0'], expectCode: 0 },
      { label: 'recallscape --version', args: [CLI, '--version'], expectCode: 0 },
      { label: 'recallscape --help', args: [CLI, '--help'], expectCode: 0 },
      {
        label: 'recallscape plan small.yaml --calibrate 0',
        args: [CLI, 'plan', small, '--calibrate', '0'],
        expectCode: 0,
      },
      { label: 'recallscape plan small.yaml (times 3 jobs)', args: [CLI, 'plan', small], expectCode: 0 },
      {
        label: 'recallscape run one.yaml (1 job, resumed: 0 to run)',
        args: [CLI, 'run', one, '--out', join(dir, 'one')],
        expectCode: 0,
      },
      { label: 'recallscape worker --help', args: [CLI, 'worker', '--help'], expectCode: 0 },
      {
        label: 'requeue, Redis unreachable, --connect-timeout 1000',
        args: [CLI, 'requeue', join(dir, 'made', 'small'), '--redis', redis, '--connect-timeout', '1000'],
        expectCode: 1,
      },
      {
        label: 'requeue, Redis unreachable, default timeout',
        args: [CLI, 'requeue', join(dir, 'made', 'small'), '--redis', redis],
        expectCode: 1,
        runs: Math.min(runs, 3),
      },
    ];

    console.log(
      `runs per case: ${runs} after one warm-up (3 for the default connect timeout); seconds, median [min-max]`,
    );
    console.log(`${'case'.padEnd(56)} ${'wall'.padEnd(20)} cpu (user+sys)`);
    for (const c of cases) {
      const first = await once(c.args, dir, c.env ?? {});
      if (first.code !== c.expectCode) {
        throw new Error(`${c.label}: exit ${first.code}, expected ${c.expectCode}\n${first.stderr}`);
      }
      const samples: Sample[] = [];
      for (let i = 0; i < (c.runs ?? runs); i++) samples.push(await once(c.args, dir, c.env ?? {}));
      const wall = samples.map((s) => s.wallMs);
      const cpu = samples.map((s) => s.cpuMs);
      const range = (v: number[]) => `${seconds(median(v))} [${seconds(Math.min(...v))}-${seconds(Math.max(...v))}]`;
      console.log(`${c.label.padEnd(56)} ${range(wall).padEnd(20)} ${range(cpu)}`);
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
