import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runSweep } from '../../coordinator/run-sweep.js';
import { createLogger } from '../../shared/logger.js';
import { type LoadedSweep, parseSweepText } from '../../shared/sweep/load.js';
import { runCli } from './cli-helpers.js';

// Threads run the compiled entry (npm test builds first); the failing sweep is run from sources.
const ENTRY = new URL('../../dist/worker/thread-entry.js', import.meta.url);

const small = (name: string, values: readonly number[], replicates: number) =>
  [
    `name: ${name}`,
    'seed: 4',
    `replicates: ${replicates}`,
    'fixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4 }',
    `vary: { patternOverlap: { list: [${values.join(', ')}] } }`,
    '',
  ].join('\n');

interface Entry {
  name: string;
  planned: number | null;
  done: number;
  failedAttempts: number;
  failingJobs: number;
  lastActivity: string;
  report: { state: string; builtAt: string | null };
  problem: string | null;
}

let root: string;
let started: number;

/** The sweeps command's JSON, by sweep name. */
async function listed(): Promise<Map<string, Entry>> {
  const result = await runCli(['sweeps', join(root, 'results'), '--json'], root);
  expect(result.code, result.stderr).toBe(0);
  const parsed = JSON.parse(result.stdout) as { sweeps: Entry[] };
  return new Map(parsed.sweeps.map((s) => [s.name, s]));
}

beforeAll(async () => {
  started = Date.now();
  root = await mkdtemp(join(tmpdir(), 'rs-sweeps-'));
  const files = join(root, 'files');
  await mkdir(files);
  const out = join(root, 'results');

  // finished: 3 points x 2 replicates, every job run, then its report built.
  await writeFile(join(files, 'finished.yaml'), small('finished', [0, 0.5, 1], 2));
  expect((await runCli(['run', join(files, 'finished.yaml'), '--out', out, '--threads', '1'], root)).code).toBe(0);
  expect((await runCli(['report', join(out, 'finished')], root)).code).toBe(0);

  // partial: 4 points x 1 replicate; its shard cut back to the first record, as a run stopped early leaves it.
  await writeFile(join(files, 'partial.yaml'), small('partial', [0, 0.25, 0.5, 0.75], 1));
  // --no-report: run would otherwise end with a report, and this sweep is meant to have none.
  expect(
    (await runCli(['run', join(files, 'partial.yaml'), '--out', out, '--threads', '1', '--no-report'], root)).code,
  ).toBe(0);
  const shards = join(out, 'partial', 'results');
  const [shard] = await readdir(shards);
  const firstLine = (await readFile(join(shards, shard ?? ''), 'utf8')).split('\n')[0];
  await writeFile(join(shards, shard ?? ''), `${firstLine}\n`);

  // failing: every job fails, as for a worker that lacks the sweep's model version.
  const real = parseSweepText(small('failing', [0, 1], 1), 'failing.yaml');
  const failing: LoadedSweep = { ...real, model: { ...real.model, version: '999' } };
  const logger = createLogger({ name: 'test', destination: new Writable({ write: (_c, _e, done) => done() }) });
  const run = await runSweep({ sweep: failing, root: out, threads: 1, logger, threadEntry: ENTRY });
  expect(run.failed).toBe(2);

  // Not a sweep: no sweep.json.
  await mkdir(join(out, 'notes'));
  await writeFile(join(out, 'notes', 'todo.txt'), 'nothing\n');
}, 300_000);

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('recallscape sweeps', () => {
  it('lists every sweep folder under the root with jobs done of planned and failing jobs', async () => {
    const sweeps = await listed();
    expect([...sweeps.keys()].sort()).toEqual(['failing', 'finished', 'partial']);
    // Planned = points x replicates (common practice, no source).
    expect(sweeps.get('finished')).toMatchObject({ planned: 6, done: 6, failingJobs: 0, failedAttempts: 0 });
    expect(sweeps.get('partial')).toMatchObject({ planned: 4, done: 1, failingJobs: 0 });
    expect(sweeps.get('failing')).toMatchObject({ planned: 2, done: 0, failingJobs: 2, failedAttempts: 2 });
    for (const s of sweeps.values()) {
      expect(s.problem).toBeNull();
      const at = Date.parse(s.lastActivity);
      expect(at).toBeGreaterThanOrEqual(started - 1_000);
      expect(at).toBeLessThanOrEqual(Date.now());
    }
  });

  it('tells a current report from a missing one and from one older than the results', async () => {
    let sweeps = await listed();
    expect(sweeps.get('finished')?.report.state).toBe('current');
    expect(sweeps.get('partial')?.report).toEqual({ state: 'none', builtAt: null });

    expect((await runCli(['report', join(root, 'results', 'partial')], root)).code).toBe(0);
    expect((await listed()).get('partial')?.report.state).toBe('current');
    // Resuming the run adds the three missing results after the report was built.
    const resumed = await runCli(
      ['run', join(root, 'files', 'partial.yaml'), '--out', join(root, 'results'), '--no-report'],
      root,
    );
    expect(resumed.code, resumed.stderr).toBe(0);
    sweeps = await listed();
    expect(sweeps.get('partial')).toMatchObject({ done: 4, planned: 4, report: { state: 'stale' } });
  });

  it('prints one row per sweep under a header for a person', async () => {
    const result = await runCli(['sweeps', join(root, 'results')], root);
    expect(result.code, result.stderr).toBe(0);
    const lines = result.stdout.split('\n');
    expect(lines[0]).toMatch(/^sweep\s+jobs done\s+failing\s+last activity\s+report$/);
    expect(lines.find((l) => l.startsWith('failing '))).toMatch(/^failing\s+0 of 2 \(0\.0%\)\s+2\s/);
    expect(lines.find((l) => l.startsWith('finished '))).toMatch(/6 of 6 \(100\.0%\)\s+0\s.*up to date$/);
  });

  it('lists a single sweep folder given as the root', async () => {
    const result = await runCli(['sweeps', join(root, 'results', 'failing'), '--json'], root);
    expect(result.code, result.stderr).toBe(0);
    const parsed = JSON.parse(result.stdout) as { sweeps: Entry[] };
    expect(parsed.sweeps.map((s) => s.name)).toEqual(['failing']);
  });

  it('refuses a root that does not exist with one line and exit 2', async () => {
    const result = await runCli(['sweeps', join(root, 'nowhere')], root);
    expect(result.code).toBe(2);
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toMatch(/results root .*nowhere does not exist/);
    expect(result.stdout).toBe('');
  });
});
