import { readFile } from 'node:fs/promises';
import { describe, expect, it } from 'vitest';
import { DEMO_SWEEP_YAML } from '../../coordinator/demo-sweep.js';
import { formatPlan, planSweep } from '../../coordinator/plan-sweep.js';
import { parseSweepText } from '../../shared/sweep/load.js';

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
  it('counts points and jobs and sums the model cost over every job', () => {
    const plan = planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 0 });
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

  it('calibrates seconds per operation by timing real jobs', () => {
    const plan = planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 3 });
    const c = plan.calibration!;
    expect(c.jobs).toBe(3);
    // Timing points are spread over the 15 points: indices 0, 5 and 10 have burnMs 20, 40 and 60.
    expect(c.ops).toBe((20 + 40 + 60) * 1e6);
    // Each cpu-burn job is busy for at least burnMs, so at least 120 ms were timed.
    expect(c.seconds).toBeGreaterThanOrEqual(0.12);
    expect(plan.coreHours).toBeCloseTo((plan.totalOps * c.secondsPerOp!) / 3600, 12);
    // 2.4e9 operations at >= 1e-9 s each is at least 2.4 s of one core.
    expect(plan.coreHours! * 3600).toBeGreaterThanOrEqual(2.4);
  });

  it('prints the counts, the estimate and the first points as text', () => {
    const text = formatPlan(planSweep(parseSweepText(BURN, 'burn.yaml'), { calibrate: 1 }), 2);
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
