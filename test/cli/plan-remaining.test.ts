import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatPlan, planSweep, type SweepPlan, wallSeconds } from '../../coordinator/plan-sweep.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { TEST_MODEL_FLAGS, useTestModels } from '../fixtures/test-models.js';
import { runCli } from './cli-helpers.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const BURN = `
name: burn-left
model: cpu-burn
seed: 3
replicates: 2
vary:
  burnMs: { list: [10, 20, 30] }
`;

describe('planSweep with results already there', () => {
  it('leaves the jobs that have a result out of the remaining work', async () => {
    const sweep = parseSweepText(BURN, 'burn.yaml');
    const done = new Set([...expandJobs(sweep)].filter((j) => j.params['burnMs'] === 10).map((j) => j.key));
    const plan = await planSweep(sweep, { calibrate: 0, done });
    expect(plan.jobs).toBe(6);
    expect(plan.done).toBe(2);
    expect(plan.remainingJobs).toBe(4);
    // cpu-burn costs burnMs * 1e6 per job: (20 + 30) * 2 replicates * 1e6 left of (10 + 20 + 30) * 2 * 1e6 (worked by hand).
    expect(plan.remainingOps).toBe(100e6);
    expect(plan.totalOps).toBe(120e6);
  });

  it('counts every job as remaining when no result is given', async () => {
    const plan = await planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 0 });
    expect(plan).toMatchObject({ done: 0, remainingJobs: 6, remainingOps: 120e6, remainingCoreHours: null });
  });
});

describe('wallSeconds', () => {
  const plan = (remainingJobs: number, remainingCoreHours: number): SweepPlan =>
    ({ remainingJobs, remainingCoreHours }) as SweepPlan;

  it('shares the core-seconds out over the cores when there are more jobs than cores', () => {
    // 100 jobs of 36 s on 10 cores: 10 rounds of 36 s = 360 s (worked by hand).
    expect(wallSeconds(plan(100, 1), 10)).toBeCloseTo(360, 9);
  });

  it('never promises less than one job per core in turn', () => {
    // 100 jobs of 36 s on 1,000 cores still take one job's 36 s (worked by hand).
    expect(wallSeconds(plan(100, 1), 1000)).toBeCloseTo(36, 9);
    expect(wallSeconds(plan(0, 0), 8)).toBe(0);
  });
});

let dir: string;

const SMALL = [
  'name: left',
  'seed: 2',
  'replicates: 2',
  'fixed: { hypercolumns: 6, minicolumns: 10, sequenceLength: 4, noise: 0.2 }',
  'vary: { patternOverlap: { list: [0, 0.5, 1] } }',
  '',
].join('\n');

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-plan-left-'));
  await writeFile(join(dir, 'left.yaml'), SMALL);
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('recallscape plan with results already there', () => {
  it('estimates for any number of cores given with --cores', async () => {
    const result = await runCli(['plan', 'left.yaml', '--calibrate', '1', '--cores', '64', ...TEST_MODEL_FLAGS], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toMatch(/^estimate +\S+ core-hours, about .* on 64 cores /m);
    expect(result.stdout).not.toMatch(/^results/m);
  });

  it('refuses a --cores that is not a whole number of at least 1, naming it', async () => {
    for (const bad of ['0', '2.5', 'many']) {
      const result = await runCli(['plan', 'left.yaml', '--cores', bad, ...TEST_MODEL_FLAGS], dir);
      expect(result.code).toBe(2);
      expect(result.stderr).toContain('--cores');
      expect(result.stdout).toBe('');
    }
  });

  it('counts the results of a stopped run and estimates only what is left', async () => {
    const run = await runCli(['run', 'left.yaml', '--out', 'out', '--threads', '1', ...TEST_MODEL_FLAGS], dir);
    expect(run.code, run.stderr).toBe(0);
    // Keep two of the six records, as a run stopped early leaves them.
    const shards = join(dir, 'out', 'left', 'results');
    const [shard = ''] = await readdir(shards);
    const lines = (await readFile(join(shards, shard), 'utf8')).split('\n').filter((l) => l !== '');
    await writeFile(join(shards, shard), `${lines.slice(0, 2).join('\n')}\n`);

    const result = await runCli(
      ['plan', 'left.yaml', '--out', 'out', '--calibrate', '1', '--cores', '4', ...TEST_MODEL_FLAGS],
      dir,
    );
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toMatch(/^results +2 of 6 jobs already have a result in out\/left; 4 to run$/m);
    expect(result.stdout).toMatch(/^estimate +\S+ core-hours left of \S+, about .* on 4 cores /m);
    const match = /^estimate +(\S+) core-hours left of (\S+),/m.exec(result.stdout);
    // With noise every unit is updated, so a trial's cost does not depend on patternOverlap: 4 of 6
    // equal jobs are left, 2/3 of the core-hours, to the 3 digits printed (worked by hand).
    expect(Number(match?.[1]) / Number(match?.[2])).toBeCloseTo(2 / 3, 2);
  });

  it('says nothing is left for a finished sweep', async () => {
    const run = await runCli(['run', 'left.yaml', '--out', 'out', '--threads', '1', ...TEST_MODEL_FLAGS], dir);
    expect(run.code, run.stderr).toBe(0);
    const result = await runCli(['plan', 'left.yaml', '--out', 'out', '--calibrate', '1', ...TEST_MODEL_FLAGS], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toMatch(/^results +6 of 6 jobs already have a result in out\/left; 0 to run$/m);
    expect(result.stdout).toMatch(/^estimate +nothing left to run \(the whole sweep: \S+ core-hours\)$/m);
  });

  it('counts nothing from a folder that holds another sweep of the same name', async () => {
    await writeFile(join(dir, 'other.yaml'), SMALL.replace('seed: 2', 'seed: 9'));
    const result = await runCli(['plan', 'other.yaml', '--out', 'out', '--calibrate', '0', ...TEST_MODEL_FLAGS], dir);
    expect(result.code, result.stderr).toBe(0);
    expect(result.stdout).toMatch(/^results +none counted: out\/left holds another sweep of this name/m);
  });
});

describe('the plan text', () => {
  it('says how many jobs have results and where', async () => {
    const sweep = parseSweepText(BURN, 'burn.yaml');
    const done = new Set([...expandJobs(sweep)].slice(0, 3).map((j) => j.key));
    const text = formatPlan(await planSweep(sweep, { calibrate: 0, done }), {
      cores: { count: 2, unit: 'thread' },
      resultsDir: 'results/burn-left',
    });
    expect(text).toMatch(/^results +3 of 6 jobs already have a result in results\/burn-left; 3 to run$/m);
  });
});
