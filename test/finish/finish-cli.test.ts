import { existsSync } from 'node:fs';
import { readFile, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import {
  deleteKeys,
  inspector,
  type OwnRedis,
  type Running,
  readNdjson,
  removeDir,
  runCli,
  SHARED_REDIS,
  startCli,
  startOwnRedis,
  stopCli,
  tempDir,
  uniqueQueue,
  waitFor,
} from '../queue/helpers.js';

// `finish` as a person runs it: real CLI processes (built dist/), real workers, real Redis. The sweeps
// use the `pause` model of test/finish/fixtures: a job waits a moment on a timer, so a worker can be
// killed inside a job without loading the machine.

const FIXTURES = join(import.meta.dirname, 'fixtures');
const MODELS = ['--models', FIXTURES];

let root = '';
const started: Running[] = [];

beforeAll(async () => {
  root = await tempDir('finish');
});

afterEach(async () => {
  for (const running of started.splice(0)) await stopCli(running, 5_000);
});

afterAll(async () => {
  await removeDir(root);
});

/** Parsed pino lines a process printed so far (its other lines are skipped). */
function logLines(running: Running): Array<Record<string, unknown>> {
  return running
    .output()
    .split('\n')
    .filter((l) => l.startsWith('{"level"'))
    .map((l) => JSON.parse(l) as Record<string, unknown>);
}

function worker(redisUrl: string, out: string, flags: readonly string[], extra: readonly string[] = []): Running {
  const running = startCli(
    ['worker', '--redis', redisUrl, '--threads', '1', '--out', out, ...flags, ...MODELS, ...extra],
    { RECALLSCAPE_LOG_LEVEL: 'debug' },
  );
  started.push(running);
  return running;
}

async function ready(running: Running): Promise<void> {
  await waitFor(
    'a worker to be ready',
    async () => (logLines(running).some((l) => l['msg'] === 'worker ready') ? true : undefined),
    60_000,
  );
}

/** The part of a record that any run of its job reproduces exactly. */
function essence(r: Record<string, unknown>): string {
  return JSON.stringify([r['sweepHash'], r['seed'], r['replicate'], r['point'], r['metrics']]);
}

describe('recallscape finish', () => {
  it('follows a sweep through a killed worker and an emptied Redis to every job recorded once and the report built, exit 0', async () => {
    // A Redis of this test's own: FLUSHALL below touches nobody else's keys.
    const redis: OwnRedis = await startOwnRedis();
    try {
      const queue = uniqueQueue();
      const file = join(root, 'follow.yaml');
      // 3 points x 8 replicates = 24 jobs of 400 ms each.
      await writeFile(
        file,
        'name: follow-me\nmodel: pause\nseed: 4\nreplicates: 8\nfixed: { waitMs: 400 }\nvary:\n  value: { list: [1, 2, 3] }\n',
      );
      const planned = 24;
      const coordinator = join(root, 'coordinator');
      const dir = join(coordinator, 'follow-me');
      const submitted = await runCli([
        'submit',
        file,
        '--redis',
        redis.url,
        '--out',
        coordinator,
        '--json',
        ...queue.flags,
        ...MODELS,
      ]);
      expect(submitted.code, submitted.stderr).toBe(0);
      expect(JSON.parse(submitted.stdout)).toMatchObject({ planned, enqueued: planned });

      // The follower starts at once and gathers as the workers go.
      const follower = startCli(
        ['finish', dir, '--redis', redis.url, '--interval', '300', '--json', ...queue.flags, ...MODELS],
        { RECALLSCAPE_LOG_LEVEL: 'warn' },
      );
      started.push(follower);

      // Two workers on disks of their own (no shared disk): only finish brings records into `dir`.
      // A short lock and stall check, so the killed worker's job comes back within seconds.
      const timing = ['--lock-ms', '2000', '--stall-check-ms', '1000', '--prefetch', '1'];
      const diskA = join(root, 'machine-a');
      const diskB = join(root, 'machine-b');
      const a = worker(redis.url, diskA, queue.flags, ['--name', 'machine-a', ...timing]);
      const b = worker(redis.url, diskB, queue.flags, ['--name', 'machine-b', ...timing]);
      await Promise.all([ready(a), ready(b)]);

      // Kill worker A with SIGKILL while it is inside a job, then start it again.
      await waitFor(
        'worker A to be inside a job',
        async () => {
          const lines = logLines(a);
          const begun = lines.filter((l) => l['msg'] === 'job started').map((l) => l['job']);
          const done = new Set(lines.filter((l) => l['msg'] === 'job done').map((l) => l['job']));
          return begun.some((id) => !done.has(id)) ? true : undefined;
        },
        60_000,
        20,
      );
      a.child.kill('SIGKILL');
      expect((await a.exited).signal).toBe('SIGKILL');
      const again = worker(redis.url, diskA, queue.flags, ['--name', 'machine-a', ...timing]);

      // Once some records reached the coordinator's folder, Redis loses everything.
      const gatheredBefore = await waitFor(
        'some records gathered into the sweep folder',
        async () => {
          const n = (await readNdjson(join(dir, 'results'))).length;
          return n >= 4 ? n : undefined;
        },
        90_000,
        50,
      );
      const client = await inspector(redis.url);
      try {
        await client.flushall();
      } finally {
        client.disconnect();
      }
      // Mid-way: most jobs were still to do when Redis lost them.
      expect(gatheredBefore).toBeLessThan(planned / 2);
      await ready(again);

      const exit = await follower.exited;
      const output = follower.output();
      // On failure, what the workers said about failed jobs and the queue too, not only the follower.
      const warnings = [a, b, again]
        .flatMap((w, i) =>
          logLines(w).map((l): Record<string, unknown> => ({ worker: ['A', 'B', 'A again'][i], ...l })),
        )
        .filter((l) => l['level'] === 40 || l['level'] === 50 || l['msg'] === 'job failed')
        .map((l) => JSON.stringify(l))
        .join('\n');
      expect(exit.code, `${output}\nworkers:\n${warnings}`).toBe(0);
      const outcome = JSON.parse(output.split('\n').find((l) => l.startsWith('{"name"')) ?? '{}') as {
        end: string;
        planned: number;
        recorded: number;
        queued: number;
        report: string | null;
      };
      expect(outcome).toMatchObject({ end: 'complete', planned, recorded: planned });
      // The flush lost the waiting jobs (at least those no worker had started): finish queued them again.
      expect(outcome.queued).toBeGreaterThan(0);
      expect(output).toMatch(/were neither recorded nor in the queue \(lost from Redis\): queued them again/);

      // Every planned job recorded exactly once in the sweep folder, each as some worker computed it.
      const records = await readNdjson(join(dir, 'results'));
      expect(records).toHaveLength(planned);
      const keys = new Set(records.map((r) => String(r['key'])));
      expect(keys.size).toBe(planned);
      const computed = new Map<string, Set<string>>();
      for (const r of [
        ...(await readNdjson(join(diskA, 'follow-me', 'results'))),
        ...(await readNdjson(join(diskB, 'follow-me', 'results'))),
      ]) {
        const key = String(r['key']);
        computed.set(key, new Set([...(computed.get(key) ?? []), essence(r)]));
      }
      for (const r of records) expect([...(computed.get(String(r['key'])) ?? [])]).toEqual([essence(r)]);

      // The report: one row per point in points.csv, each with all 8 trials.
      expect(outcome.report).toBe(join(dir, 'report'));
      expect(existsSync(join(dir, 'report', 'index.html'))).toBe(true);
      const rows = (await readFile(join(dir, 'report', 'points.csv'), 'utf8')).trim().split('\n');
      const header = (rows[0] ?? '').split(',');
      expect(rows.slice(1).map((row) => row.split(',')[header.indexOf('n')])).toEqual(['8', '8', '8']);

      // Redis holds no finished job of the sweep: finish freed them as it gathered.
      const inspect = await inspector(redis.url);
      try {
        expect(await inspect.zcard(`${queue.prefix}:${queue.name}:completed`)).toBe(0);
      } finally {
        inspect.disconnect();
      }
    } finally {
      for (const running of started.splice(0)) await stopCli(running, 5_000);
      await redis.stop();
    }
  });

  it('exits with 1 and names the jobs that failed permanently, with the command that retries them', async () => {
    const queue = uniqueQueue();
    try {
      const file = join(root, 'broken.yaml');
      // 2 modes x 2 replicates: the 2 wrong-metrics jobs fail at their first attempt, for good.
      await writeFile(
        file,
        'name: half-broken\nmodel: pause\nseed: 6\nreplicates: 2\nvary:\n  mode: { list: [ok, wrong-metrics] }\n',
      );
      const out = join(root, 'broken');
      const submitted = await runCli([
        'submit',
        file,
        '--redis',
        SHARED_REDIS,
        '--out',
        out,
        ...queue.flags,
        ...MODELS,
      ]);
      expect(submitted.code, submitted.stderr).toBe(0);
      const w = worker(SHARED_REDIS, out, queue.flags);
      await ready(w);
      const dir = join(out, 'half-broken');
      const result = await runCli([
        'finish',
        dir,
        '--redis',
        SHARED_REDIS,
        '--interval',
        '300',
        ...queue.flags,
        ...MODELS,
      ]);
      expect(result.code, result.stderr).toBe(1);
      expect(result.stdout).toMatch(/^sweep half-broken cannot finish: 2 of 4 jobs have no record/m);
      expect(result.stdout).toMatch(/^missing: 2 without a record: 2 failed permanently$/m);
      expect(result.stdout).toMatch(/attempts recorded here: exception 2/);
      expect(result.stdout).toMatch(
        /^give the failed jobs fresh attempts and follow again: recallscape finish \S+ .*--failed$/m,
      );
      expect(existsSync(join(dir, 'report'))).toBe(false);
    } finally {
      await deleteKeys(SHARED_REDIS, queue.prefix);
    }
  });

  it('stops at the time --until gives, with exit 124 and the jobs still waiting named', async () => {
    const queue = uniqueQueue();
    try {
      const file = join(root, 'nobody.yaml');
      await writeFile(file, 'name: nobody-serves\nmodel: pause\nseed: 1\nreplicates: 3\n');
      const out = join(root, 'nobody');
      const submitted = await runCli([
        'submit',
        file,
        '--redis',
        SHARED_REDIS,
        '--out',
        out,
        ...queue.flags,
        ...MODELS,
      ]);
      expect(submitted.code, submitted.stderr).toBe(0);
      // No worker: nothing moves, and finish waits for one until the time is up.
      const dir = join(out, 'nobody-serves');
      const result = await runCli(['finish', dir, '--redis', SHARED_REDIS, '--until', '2s', ...queue.flags, ...MODELS]);
      expect(result.code, result.stderr).toBe(124);
      expect(result.stdout).toMatch(/^missing: 3 without a record: 3 waiting$/m);
      expect(result.stdout).toMatch(/^follow again with: recallscape finish /m);
    } finally {
      await deleteKeys(SHARED_REDIS, queue.prefix);
    }
  });

  it('refuses a time for --until that has passed, with exit 2, before it touches Redis', async () => {
    const out = join(root, 'bad-until');
    const file = join(root, 'bad-until.yaml');
    await writeFile(file, 'name: bad-until\nmodel: pause\nseed: 1\n');
    // A folder with sweep.json, made by run (no Redis needed).
    expect((await runCli(['run', file, '--out', out, '--threads', '1', '--no-report', ...MODELS])).code).toBe(0);
    const result = await runCli([
      'finish',
      join(out, 'bad-until'),
      '--redis',
      'redis://127.0.0.1:1',
      '--until',
      '2001-01-01T00:00Z',
      ...MODELS,
    ]);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/^recallscape: --until: that time has passed/);
  });
});

describe('recallscape finish on an adaptive sweep', () => {
  it('drives the design over the queue with two workers to the same points and replicates as the embedded run', async () => {
    const queue = uniqueQueue();
    try {
      // One row of six starting points, batches of 8 up to 32 replicates, two rounds of refinement.
      const file = join(root, 'adaptive.yaml');
      await writeFile(
        file,
        `name: adaptive-queue
model: bcpnn-sequences
seed: 11
fixed: { hypercolumns: 6, minicolumns: 12, sequenceLength: 6, sequenceCount: 2, noise: 2, overlapLength: 2 }
vary:
  patternOverlap: { from: 0, to: 1, steps: 6 }
refine:
  replicates: { start: 8, max: 32 }
  rounds: 2
report: { x: patternOverlap }
`,
      );
      const embedded = await runCli(['run', file, '--out', join(root, 'adaptive-embedded'), '--threads', '1']);
      expect(embedded.code, embedded.stderr).toBe(0);

      const out = join(root, 'adaptive-queue');
      const submitted = await runCli(['submit', file, '--redis', SHARED_REDIS, '--out', out, '--json', ...queue.flags]);
      expect(submitted.code, submitted.stderr).toBe(0);
      // The starting design: 6 points x 8 replicates, as the sweep text says.
      expect(JSON.parse(submitted.stdout)).toMatchObject({ planned: 48, enqueued: 48 });
      // Two workers on disks of their own: the design can only grow from what finish gathers.
      const a = worker(SHARED_REDIS, join(root, 'adaptive-a'), queue.flags);
      const b = worker(SHARED_REDIS, join(root, 'adaptive-b'), queue.flags);
      await Promise.all([ready(a), ready(b)]);
      const dir = join(out, 'adaptive-queue');
      const followed = await runCli(
        ['finish', dir, '--redis', SHARED_REDIS, '--interval', '300', '--json', ...queue.flags],
        { timeoutMs: 300_000 },
      );
      expect(followed.code, followed.stderr).toBe(0);
      expect(JSON.parse(followed.stdout)).toMatchObject({ end: 'complete' });
      expect(followed.stderr).toMatch(/queued \d+ trial\(s\) of the adaptive design/);

      const trials = async (folder: string): Promise<{ trials: string[]; lines: number }> => {
        const records = await readNdjson(join(folder, 'results'));
        return {
          trials: records.map((r) => `${JSON.stringify(r['point'])}#${String(r['replicate'])}`).sort(),
          lines: records.length,
        };
      };
      const reference = await trials(join(root, 'adaptive-embedded', 'adaptive-queue'));
      const distributed = await trials(dir);
      // More than the starting grid ran, or the test would not show the loop at work.
      expect(reference.trials.length).toBeGreaterThan(48);
      expect(distributed.trials).toEqual(reference.trials);
      expect(distributed.lines).toBe(distributed.trials.length);
      expect(existsSync(join(dir, 'report', 'index.html'))).toBe(true);
    } finally {
      await deleteKeys(SHARED_REDIS, queue.prefix);
    }
  });
});

describe('recallscape run and its report', () => {
  it('ends with the report, as demo does, and --no-report leaves it out', async () => {
    const file = join(root, 'reported.yaml');
    await writeFile(file, 'name: reported\nmodel: pause\nseed: 2\nreplicates: 2\nvary:\n  value: { list: [1, 2] }\n');
    const withReport = await runCli(['run', file, '--out', join(root, 'with'), '--threads', '1', ...MODELS]);
    expect(withReport.code, withReport.stderr).toBe(0);
    expect(withReport.stdout).toMatch(/^report: \S+reported\/report\/ \(/m);
    expect(existsSync(join(root, 'with', 'reported', 'report', 'index.html'))).toBe(true);
    expect(existsSync(join(root, 'with', 'reported', 'report', 'points.csv'))).toBe(true);

    const without = await runCli([
      'run',
      file,
      '--out',
      join(root, 'without'),
      '--threads',
      '1',
      '--no-report',
      ...MODELS,
    ]);
    expect(without.code, without.stderr).toBe(0);
    expect(without.stdout).toMatch(/every job has a result\. build a report with: recallscape report /);
    expect(existsSync(join(root, 'without', 'reported', 'report'))).toBe(false);
  });
});
