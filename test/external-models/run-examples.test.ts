import { existsSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { shardRecords } from '../cli/cli-helpers.js';
import { modelEnv, ROOT, removeDir, runCliIn as runCli, tempDir } from './helpers.js';

// The example models through the real command line (built dist/): `run` with
// --models, then `report`, as docs/own-model.md shows them.

let out = '';

beforeAll(async () => {
  out = await tempDir('examples');
});
afterAll(async () => {
  await removeDir(out);
});

/** Standard normal distribution function from erf, Abramowitz and Stegun (1964) formula 7.1.26 (error < 1.5e-7). */
function normalCdf(z: number): number {
  const x = Math.abs(z) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * x);
  const poly = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429))));
  const erf = 1 - poly * Math.exp(-x * x);
  return z >= 0 ? 0.5 * (1 + erf) : 0.5 * (1 - erf);
}

type Row = Record<string, unknown> & { point: Record<string, number>; metrics: Record<string, unknown> };

function byPoint(records: readonly Row[], names: readonly string[]): Map<string, Row[]> {
  const groups = new Map<string, Row[]>();
  for (const r of records) {
    const id = names.map((n) => r.point[n]).join('|');
    groups.set(id, [...(groups.get(id) ?? []), r]);
  }
  return groups;
}

describe('the example models through recallscape run and report', () => {
  it('runs the JavaScript module example: every job, strengths and success rates as the forgetting formula says', async () => {
    const run = await runCli(
      [
        'run',
        'examples/models/forgetting-js/sweep.yaml',
        '--models',
        'examples/models',
        '--out',
        out,
        '--threads',
        '2',
      ],
      ROOT,
    );
    expect(run.stderr).not.toMatch(/error/i);
    expect(run.code).toBe(0);
    expect(run.stdout).toMatch(/2600 jobs planned, 0 had results before this run, 2600 ran now \(0 with errors\)/);
    const records = (await shardRecords(join(out, 'forgetting-map', 'results'))) as Row[];
    expect(records).toHaveLength(13 * 10 * 20);
    expect(new Set(records.map((r) => r['key'])).size).toBe(records.length);
    // Expected values from the model's equations (docs/own-model.md), computed here:
    // strength = exp(-delay / tau); P(recall) = Phi((strength - threshold) / noise), threshold 0.3, noise 0.1.
    let expectedSuccesses = 0;
    let variance = 0;
    let successes = 0;
    for (const [, rows] of byPoint(records, ['delayMs', 'tauMs'])) {
      const { delayMs, tauMs } = rows[0]!.point as { delayMs: number; tauMs: number };
      const strength = Math.exp(-delayMs / tauMs);
      const p = normalCdf((strength - 0.3) / 0.1);
      const ok = rows.filter((r) => r.metrics['success'] === true).length;
      for (const r of rows) {
        expect(r.metrics['strength']).toBeCloseTo(strength, 12);
        expect(r.metrics['success']).toBe(r.metrics['recalled']);
      }
      // Five standard deviations from the threshold: a wrong outcome has odds of 3e-7 per trial.
      if ((strength - 0.3) / 0.1 > 5) expect(ok).toBe(rows.length);
      if ((strength - 0.3) / 0.1 < -5) expect(ok).toBe(0);
      expectedSuccesses += rows.length * p;
      variance += rows.length * p * (1 - p);
      successes += ok;
    }
    // All 2600 trials together: within 4 standard deviations of the expected count.
    expect(Math.abs(successes - expectedSuccesses)).toBeLessThan(4 * Math.sqrt(variance));

    const report = await runCli(['report', join(out, 'forgetting-map'), '--models', 'examples/models'], ROOT);
    expect(report.code).toBe(0);
    expect(existsSync(join(out, 'forgetting-map', 'report', 'phase-success.svg'))).toBe(true);
    const csv = (await readFile(join(out, 'forgetting-map', 'report', 'points.csv'), 'utf8')).trim().split('\n');
    expect(csv).toHaveLength(1 + 130);
  });

  it('runs the Python program example: one stored pattern is always recalled, fifteen from a very noisy cue almost never', async () => {
    const run = await runCli(
      ['run', 'examples/models/hopfield-py/sweep.yaml', '--models', 'examples/models', '--out', out, '--threads', '2'],
      ROOT,
    );
    expect(run.code).toBe(0);
    expect(run.stdout).toMatch(/320 jobs planned, 0 had results before this run, 320 ran now \(0 with errors\)/);
    const records = (await shardRecords(join(out, 'hopfield-load', 'results'))) as Row[];
    expect(records).toHaveLength(8 * 5 * 8);
    const groups = byPoint(records, ['patterns', 'cueNoise']);
    for (const [id, rows] of groups) {
      const [patterns, cueNoise] = id.split('|').map(Number) as [number, number];
      const ok = rows.filter((r) => r.metrics['success'] === true).length;
      // One stored pattern: a cue with under half its units flipped has a positive
      // overlap, so every unit's field points to the pattern (Hopfield 1982).
      if (patterns === 1) expect(ok, id).toBe(8);
      // 15 patterns in 60 units is a load of 0.25, beyond capacity (about 0.14,
      // Amit, Gutfreund and Sompolinsky 1985), and 40% of the cue flipped.
      if (patterns === 15 && cueNoise === 0.4) expect(ok, id).toBeLessThanOrEqual(2);
    }
    // Resume: a second run finds every result and runs nothing.
    const again = await runCli(
      ['run', 'examples/models/hopfield-py/sweep.yaml', '--models', 'examples/models', '--out', out],
      ROOT,
    );
    expect(again.stdout).toMatch(/320 had results before this run, 0 ran now/);
    const report = await runCli(['report', join(out, 'hopfield-load'), '--models', 'examples/models'], ROOT);
    expect(report.code).toBe(0);
    expect(existsSync(join(out, 'hopfield-load', 'report', 'phase-success.png'))).toBe(true);

    // inspect re-runs one job through the program, compares, and draws the trace the program sends.
    const key = String(records.find((r) => r.point['patterns'] === 9)?.['key']);
    const svg = join(out, 'inspect.svg');
    const inspect = await runCli(
      ['inspect', join(out, 'hopfield-load'), '--job', key, '--models', 'examples/models', '--file', svg],
      ROOT,
    );
    expect(inspect.code, inspect.stderr).toBe(0);
    expect(inspect.stdout).toMatch(/stored record: identical metrics/);
    expect(inspect.stdout).toMatch(/trace: 1 recall panel\(s\) drawn/);
    expect(await readFile(svg, 'utf8')).toMatch(/<svg [^>]*class="trace-plot"/);
  });

  it('plans a sweep of the Python model, timing real jobs for the estimate', async () => {
    const plan = await runCli(
      ['plan', 'examples/models/hopfield-py/sweep.yaml', '--models', 'examples/models', '--calibrate', '2'],
      ROOT,
    );
    expect(plan.code, plan.stderr).toBe(0);
    expect(plan.stdout).toMatch(/^model +hopfield-py version 1\.0\.0$/m);
    expect(plan.stdout).toMatch(/^jobs +320$/m);
    // One operation per job without a cost function: 320 operations, 2 timed jobs.
    expect(plan.stdout).toMatch(/^work +320 operations/m);
    expect(plan.stdout).toMatch(/^calibration +2 jobs timed/m);
    expect(plan.stdout).toMatch(/^estimate +[0-9.e+-]+ core-hours/m);
  });

  it('refuses a sweep of an external model without --models, and a bad description, with exit code 2 before anything is written', async () => {
    const missing = await runCli(['run', 'examples/models/hopfield-py/sweep.yaml', '--out', out], ROOT);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toMatch(/model: unknown model "hopfield-py"/);
    const bad = await runCli(
      ['plan', 'examples/models/hopfield-py/sweep.yaml', '--models', join(out, 'nowhere')],
      ROOT,
    );
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/^recallscape: --models: .*nowhere: no such folder/m);
    const outOfRange = await runCli(
      [
        'simulate',
        '--models',
        'examples/models',
        '--model',
        'hopfield-py',
        '--set',
        'units=5000',
        '--set',
        'cueNoise=0.2',
      ],
      ROOT,
    );
    expect(outOfRange.code).toBe(2);
    expect(outOfRange.stderr).toMatch(/units: must be <= 1000/);
  });

  it('simulates one trial of the Python model from the environment variable, the same twice', async () => {
    const args = ['simulate', '--model', 'hopfield-py', '--set', 'patterns=3', '--seed', '5'];
    const env = modelEnv({ RECALLSCAPE_MODELS: join(ROOT, 'examples', 'models') });
    const first = await runCli(args, ROOT, env);
    const second = await runCli(args, ROOT, env);
    expect(first.code).toBe(0);
    const metrics = JSON.parse(first.stdout) as Record<string, unknown>;
    expect(Object.keys(metrics).sort()).toEqual(['overlap', 'recalled', 'stable', 'success', 'sweeps']);
    expect(second.stdout).toBe(first.stdout);
  });
});
