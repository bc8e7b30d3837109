/**
 * This build against another one (RECALLSCAPE_BENCH_OTHER_CLI: the other
 * build's bin/recallscape.js, e.g. the build at the filing of an issue,
 * checked out beside this one with `git worktree add`, `npm ci` and
 * `npm run build`), whole commands as users type them, start-up included:
 *
 * - `run` of tiny trials (the embedded runner);
 * - `submit` of tiny trials, then one `worker` until Redis has none left
 *   (a redis-server of the section's own, a fresh queue prefix per run).
 *
 * For the no-op model and the tiny model, with 1 and 2 threads, the two
 * builds alternate run by run (A B A B ...); each run's wall time, and its
 * CPU time read from this process's reaped-children times in /proc/self/stat
 * (every process the command started; Redis's own CPU not included). Every
 * run must leave every trial recorded, or the section fails.
 *
 * A build that has the no-op model built in (older builds did) is run
 * without --models; this one loads it from test/fixtures/models.
 */
import { spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { rm } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { Redis } from 'ioredis';
import { registerModelFolders } from '../shared/models/external/model-folders.js';
import { startServer } from './queue.js';
import { deleteKeys, type JobKind, median, processCpuMs, readRecords, tinyFolder, unfinished } from './tiny-jobs.js';

const THIS_CLI = fileURLToPath(new URL('../../bin/recallscape.js', import.meta.url));
const TEST_MODELS = fileURLToPath(new URL('../../test/fixtures/models', import.meta.url));
const ROUNDS = 3;

/** Trials per run: long enough that start-up is a small part, short enough for about 10 minutes in all. */
const TRIALS: Record<JobKind, { run: number; queue: number }> = {
  'no-op': { run: 100_000, queue: 20_000 },
  'tiny model': { run: 10_000, queue: 5_000 },
};

interface Build {
  readonly label: string;
  readonly cli: string;
  /** `--models <dir>` when the build does not have the no-op model built in. */
  readonly models: readonly string[];
  /** `--no-report` where `run` has it; builds before it never wrote a report at the end of `run`. */
  readonly runFlags: readonly string[];
}

interface Timing {
  readonly wallMs: number;
  readonly cpuMs: number;
}

/** CPU time (ms) of every child of this process that has ended and been reaped. */
const reapedChildrenCpuMs = (): Promise<number> => processCpuMs('self', true);

/** Runs `node <cli> ...args` to its end; rejects with its last words unless it exits 0. */
function command(
  cli: string,
  args: readonly string[],
  env: NodeJS.ProcessEnv = {},
): { exited: Promise<void>; stop: () => void } {
  const child = spawn(process.execPath, [cli, ...args], {
    stdio: ['ignore', 'ignore', 'pipe'],
    env: { ...process.env, RECALLSCAPE_LOG_LEVEL: 'warn', ...env },
  });
  let stderr = '';
  child.stderr.on('data', (d: Buffer) => {
    stderr = (stderr + d.toString()).slice(-2000);
  });
  let stopped = false;
  const exited = new Promise<void>((done, fail) => {
    child.once('error', fail);
    child.once('close', (code) =>
      code === 0 || stopped ? done() : fail(new Error(`${cli} ${args[0]} exited with ${String(code)}: ${stderr}`)),
    );
  });
  return {
    exited,
    stop: () => {
      stopped = true;
      child.kill('SIGTERM');
    },
  };
}

/** Whether `cli` plans a no-op sweep without --models (the model is built in). */
async function hasBuiltInNoOp(cli: string): Promise<boolean> {
  const { root, file } = await tinyFolder('rs-bench-builds-', 100, 'no-op');
  try {
    await command(cli, ['plan', file]).exited;
    return true;
  } catch {
    return false;
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

/** Whether `cli run` takes --no-report (without it, older builds ended `run` with a hint, not a report). */
async function runHasNoReport(cli: string): Promise<boolean> {
  const child = spawn(process.execPath, [cli, 'run', '--help'], { stdio: ['ignore', 'pipe', 'ignore'] });
  let help = '';
  child.stdout.on('data', (d: Buffer) => {
    help += d.toString();
  });
  await new Promise<void>((done, fail) => {
    child.once('error', fail);
    child.once('close', () => done());
  });
  return help.includes('--no-report');
}

async function checkRecorded(resultsDir: string, planned: number, build: Build): Promise<void> {
  const { count } = await readRecords(resultsDir);
  if (count !== planned) throw new Error(`${build.label}: ${count} of ${planned} trials recorded`);
}

/** `run` of `trials` tiny trials of `kind` in a fresh folder. */
async function wholeRun(build: Build, kind: JobKind, threads: number, trials: number): Promise<Timing> {
  const { root, file, planned, out, resultsDir } = await tinyFolder('rs-bench-builds-', trials, kind);
  try {
    const cpu0 = await reapedChildrenCpuMs();
    const t0 = performance.now();
    const args = ['run', file, '--out', out, '--threads', String(threads), ...build.runFlags, ...build.models];
    await command(build.cli, args).exited;
    const wallMs = performance.now() - t0;
    const cpuMs = (await reapedChildrenCpuMs()) - cpu0;
    await checkRecorded(resultsDir, planned, build);
    return { wallMs, cpuMs };
  } finally {
    await rm(root, { recursive: true, force: true });
  }
}

/**
 * `submit` of `trials` tiny trials, then one `worker` on the same results
 * root until Redis holds none of them unfinished; wall time to that moment,
 * CPU time of both processes (the worker's once it has stopped).
 */
async function wholeQueue(
  build: Build,
  kind: JobKind,
  threads: number,
  trials: number,
  url: string,
  client: Redis,
): Promise<Timing> {
  const { root, file, planned, out, resultsDir } = await tinyFolder('rs-bench-builds-', trials, kind);
  const tag = randomBytes(3).toString('hex');
  const queue = ['--redis', url, '--queue', `bench-builds-${tag}`, '--prefix', `rsbb${tag}`];
  try {
    const cpu0 = await reapedChildrenCpuMs();
    const t0 = performance.now();
    await command(build.cli, ['submit', file, '--out', out, ...queue, ...build.models]).exited;
    const worker = command(build.cli, [
      'worker',
      '--out',
      out,
      '--threads',
      String(threads),
      ...queue,
      ...build.models,
    ]);
    const base = `rsbb${tag}:bench-builds-${tag}`;
    let gone = false;
    // A worker that dies fails the run (its error comes from `exited` below) instead of hanging it.
    worker.exited.then(
      () => (gone = true),
      () => (gone = true),
    );
    let wallMs = 0;
    let emptied = false;
    try {
      while (!gone) {
        if ((await unfinished(client, base)) === 0) {
          emptied = true;
          break;
        }
        await new Promise((done) => setTimeout(done, 20));
      }
      wallMs = performance.now() - t0;
    } finally {
      worker.stop();
      await worker.exited;
    }
    if (!emptied) throw new Error(`${build.label}: the worker stopped before the queue emptied`);
    const cpuMs = (await reapedChildrenCpuMs()) - cpu0;
    await checkRecorded(resultsDir, planned, build);
    return { wallMs, cpuMs };
  } finally {
    await deleteKeys(client, `rsbb${tag}`);
    await rm(root, { recursive: true, force: true });
  }
}

const seconds = (ms: number): string => `${(ms / 1000).toFixed(2)} s`;

export async function run(): Promise<void> {
  const otherCli = process.env['RECALLSCAPE_BENCH_OTHER_CLI'];
  if (otherCli === undefined || otherCli === '') {
    console.log(
      '  skipped: set RECALLSCAPE_BENCH_OTHER_CLI to another build\'s bin/recallscape.js (see "Against the build at filing" in docs/performance.md)',
    );
    return;
  }
  // This process plans the sweeps (tinyFolder counts their trials): it loads the no-op model too.
  await registerModelFolders([TEST_MODELS]);
  const builds: Build[] = [];
  for (const [label, cli] of [
    ['other build', otherCli],
    ['this build', THIS_CLI],
  ] as const) {
    builds.push({
      label,
      cli,
      models: (await hasBuiltInNoOp(cli)) ? [] : ['--models', TEST_MODELS],
      runFlags: (await runHasNoReport(cli)) ? ['--no-report'] : [],
    });
  }
  const [other, mine] = builds as [Build, Build];
  const server = await startServer();
  const client = new Redis(server.url, { maxRetriesPerRequest: 2 });
  try {
    console.log(`  other build: ${otherCli}; Redis: ${server.own ? 'a redis-server of its own' : 'the shared server'}`);
    console.log(`  whole commands, start-up included; median (range) of ${ROUNDS} runs each, the builds alternating:`);
    for (const kind of ['no-op', 'tiny model'] as const) {
      for (const mode of ['run', 'queue'] as const) {
        for (const threads of [1, 2]) {
          const trials = TRIALS[kind][mode];
          const timings = new Map<Build, Timing[]>(builds.map((b) => [b, []]));
          for (let round = 0; round < ROUNDS; round++) {
            for (const build of builds) {
              const t =
                mode === 'run'
                  ? await wholeRun(build, kind, threads, trials)
                  : await wholeQueue(build, kind, threads, trials, server.url, client);
              timings.get(build)?.push(t);
            }
          }
          const summary = (b: Build): Timing => {
            const list = timings.get(b) ?? [];
            return { wallMs: median(list.map((t) => t.wallMs)), cpuMs: median(list.map((t) => t.cpuMs)) };
          };
          const range = (b: Build): string => {
            const walls = (timings.get(b) ?? []).map((t) => t.wallMs);
            return `${seconds(Math.min(...walls))}-${seconds(Math.max(...walls))}`;
          };
          const o = summary(other);
          const m = summary(mine);
          const what = mode === 'run' ? '`run`' : '`submit`, then one `worker`';
          console.log(
            `  ${what} of ${trials} ${kind} trials, ${threads} thread${threads === 1 ? '' : 's'}: ` +
              `other ${seconds(o.wallMs)} (${range(other)}; CPU ${seconds(o.cpuMs)}), ` +
              `this ${seconds(m.wallMs)} (${range(mine)}; CPU ${seconds(m.cpuMs)}): ` +
              `this build ${(o.wallMs / m.wallMs).toFixed(2)}x the other's trials/s, ${(o.cpuMs / m.cpuMs).toFixed(2)}x its trials per CPU-second`,
          );
        }
      }
    }
  } finally {
    client.disconnect();
    await server.stop();
  }
}
