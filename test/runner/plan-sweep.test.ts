import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseWholeNumber } from '../../coordinator/cli-support.js';
import { DEMO_SWEEP_YAML } from '../../coordinator/demo-sweep.js';
import { formatPlan, loadSweepForCommand, planSweep } from '../../coordinator/plan-sweep.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const BURN = `
name: burn-plan
model: cpu-burn
seed: 3
replicates: 4
vary:
  burnMs: { list: [20, 40, 60] }
  successRate: { from: 0, to: 1, steps: 5 }
`;

describe('planSweep', () => {
  it('counts points and jobs and sums the model cost over every job', async () => {
    const plan = await planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 0 });
    expect(plan.points).toBe(15);
    expect(plan.replicates).toBe(4);
    expect(plan.jobs).toBe(60);
    // cpu-burn costs burnMs * 1e6 per job: (20 + 40 + 60) * 5 success rates * 4 replicates * 1e6 (worked by hand).
    expect(plan.totalOps).toBe(120 * 5 * 4 * 1e6);
    expect(plan.calibration).toBeNull();
    expect(plan.coreHours).toBeNull();
    // Grid order: the first varied parameter changes slowest.
    expect(plan.sample).toEqual([
      { burnMs: 20, successRate: 0 },
      { burnMs: 20, successRate: 0.25 },
      { burnMs: 20, successRate: 0.5 },
      { burnMs: 20, successRate: 0.75 },
      { burnMs: 20, successRate: 1 },
    ]);
  });

  it('calibrates seconds per operation by timing real jobs', async () => {
    const plan = await planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 3 });
    const c = plan.calibration!;
    expect(c.jobs).toBe(3);
    // Timing points are spread over the 15 points: indices 0, 5 and 10 have burnMs 20, 40 and 60.
    expect(c.ops).toBe((20 + 40 + 60) * 1e6);
    // Each cpu-burn job is busy for at least burnMs, so at least 120 ms were timed.
    expect(c.seconds).toBeGreaterThanOrEqual(0.12);
    expect(plan.coreHours).toBeCloseTo((plan.totalOps * c.secondsPerOp!) / 3600, 12);
    // cpu-burn is busy for at least burnMs of wall time per job, so the estimate
    // is at least the true total of 2.4 s (worked by hand); speed is for benchmarks.
    expect(plan.coreHours! * 3600).toBeGreaterThanOrEqual(2.4);
  });

  it('prints the counts, the estimate and the first points as text', async () => {
    const text = formatPlan(await planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 1 }), {
      cores: { count: 2, unit: 'thread' },
    });
    expect(text).toMatch(/^jobs +60$/m);
    expect(text).toMatch(/^points +15$/m);
    expect(text).toMatch(/^estimate +[0-9.e+-]+ core-hours, about .* on 2 threads/m);
    expect(text).toContain('first 5 of 15 points:');
    expect(text).toContain('  burnMs=20  successRate=0.25');
  });
});

describe('the built-in demo sweep', () => {
  it('is the same text as examples/demo.yaml', async () => {
    const file = await readFile(new URL('../../examples/demo.yaml', import.meta.url), 'utf8');
    expect(file).toBe(DEMO_SWEEP_YAML);
  });

  it('is a valid sweep over patternOverlap, overlapLength and tauZPre', () => {
    const sweep = parseSweepText(DEMO_SWEEP_YAML, 'demo');
    expect(sweep.model.id).toBe('bcpnn-sequences');
    expect(sweep.variedNames).toEqual(['patternOverlap', 'overlapLength', 'tauZPre']);
  });
});

describe('loadSweepForCommand', () => {
  it('refuses a sweep over --max-jobs with a message saying how to go on, and loads it with --yes', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'rs-plan-'));
    try {
      const file = join(dir, 'burn.yaml');
      await writeFile(file, BURN);
      // 15 points x 4 replicates = 60 jobs (worked by hand).
      const refused = loadSweepForCommand(file, { maxJobs: 59, yes: false });
      await expect(refused).rejects.toMatchObject({ name: 'InputError' });
      await expect(refused).rejects.toThrow(
        'sweep has 60 jobs, more than the limit 59; pass --yes to run it anyway or raise --max-jobs',
      );
      expect((await loadSweepForCommand(file, { maxJobs: 60, yes: false })).pointCount).toBe(15);
      expect((await loadSweepForCommand(file, { maxJobs: 59, yes: true })).pointCount).toBe(15);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });
});

describe('parseWholeNumber', () => {
  it('accepts a whole number in range, spaces around it allowed', () => {
    expect(parseWholeNumber('--threads', '4', 1, 1024)).toBe(4);
    expect(parseWholeNumber('--prefetch', ' 0 ', 0, 1000)).toBe(0);
    expect(parseWholeNumber('--max-jobs', '9007199254740991', 1)).toBe(Number.MAX_SAFE_INTEGER);
  });

  it('rejects fractions, signs, exponents, words and numbers out of range as InputError naming the option', () => {
    for (const raw of ['2.5', '-1', '+3', '1e3', 'four', '', '0x10', '1025', '0']) {
      let caught: unknown;
      try {
        parseWholeNumber('--threads', raw, 1, 1024);
      } catch (error) {
        caught = error;
      }
      expect(caught, raw).toMatchObject({
        name: 'InputError',
        message: `--threads: must be a whole number from 1 to 1024, got "${raw}"`,
        issues: [{ path: '--threads' }],
      });
    }
  });
});
