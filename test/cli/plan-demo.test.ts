import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TEST_MODEL_FLAGS } from '../fixtures/test-models.js';
import { runCli, shardLines, startCli, waitFor } from './cli-helpers.js';

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-cli-plan-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

const NO_OP = (replicates: number): string => `
name: echo
model: no-op
seed: 1
replicates: ${replicates}
vary:
  value: { from: 0, to: 1, steps: 6 }
`;

describe('recallscape plan', () => {
  it('prints job count, points, replicates, sampler, work and a sample of points, and writes nothing', async () => {
    await writeFile(join(dir, 'echo.yaml'), NO_OP(7));
    const result = await runCli(['plan', 'echo.yaml', '--calibrate', '0', ...TEST_MODEL_FLAGS], dir);
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/^sweep +echo \(from echo\.yaml\)$/m);
    expect(result.stdout).toMatch(/^sampler +grid$/m);
    expect(result.stdout).toMatch(/^points +6$/m);
    expect(result.stdout).toMatch(/^replicates +7$/m);
    expect(result.stdout).toMatch(/^jobs +42$/m);
    // no-op costs 1 operation per job: 42 jobs (worked by hand).
    expect(result.stdout).toMatch(/^work +42\.0 operations/m);
    expect(result.stdout).toMatch(/^estimate +not calibrated/m);
    expect(result.stdout).toContain('first 5 of 6 points:\n  value=0\n  value=0.2\n');
    expect((await readdir(dir)).sort()).toEqual(['echo.yaml']);
  });

  it('estimates core-hours from timed jobs of the real model', async () => {
    const demoFile = fileURLToPath(new URL('../../examples/demo.yaml', import.meta.url));
    const result = await runCli(['plan', demoFile, '--calibrate', '2', ...TEST_MODEL_FLAGS], dir);
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(/^calibration +2 jobs timed .* s per operation$/m);
    expect(result.stdout).toMatch(/^estimate +\S+ core-hours, about /m);
  });
});

describe('recallscape run into a folder of another sweep', () => {
  it('refuses with exit code 2, says how to proceed, and adds no file', async () => {
    await writeFile(join(dir, 'echo.yaml'), NO_OP(2));
    const first = await runCli(['run', 'echo.yaml', '--out', 'out', '--threads', '1', ...TEST_MODEL_FLAGS], dir);
    expect(first.code).toBe(0);
    expect(first.stdout).toContain('every job has a result');
    // run ends with the report (no --no-report).
    expect(first.stdout).toContain('report: out/echo/report/');
    const before = await shardLines(join(dir, 'out', 'echo', 'results'));
    const sweepJson = await readFile(join(dir, 'out', 'echo', 'sweep.json'), 'utf8');

    await writeFile(join(dir, 'echo.yaml'), NO_OP(3));
    const second = await runCli(['run', 'echo.yaml', '--out', 'out', '--threads', '1', ...TEST_MODEL_FLAGS], dir);
    expect(second.code).toBe(2);
    expect(second.stderr).toContain('already holds a different sweep');
    expect(second.stderr).toContain('--out');
    expect(await readFile(join(dir, 'out', 'echo', 'sweep.json'), 'utf8')).toBe(sweepJson);
    expect(await shardLines(join(dir, 'out', 'echo', 'results'))).toEqual(before);
  });
});

describe('recallscape demo', () => {
  it('runs the built-in sweep into --out and tells how to resume when interrupted', async () => {
    const demo = startCli(['demo', '--out', 'demo-out', '--threads', '2'], dir);
    await waitFor(async () => (await shardLines(join(dir, 'demo-out', 'demo-overlap', 'results'))).length >= 3, 60_000);
    demo.child.kill('SIGINT');
    const result = await demo.done;
    expect(result.code).toBe(130);
    expect(result.stdout).toMatch(/sweep demo-overlap: 10560 jobs planned, 0 had results before this run, \d+ ran now/);
    expect(result.stdout).toContain('resume with: recallscape demo --out demo-out --threads 2');
    const stored = JSON.parse(await readFile(join(dir, 'demo-out', 'demo-overlap', 'sweep.json'), 'utf8')) as {
      sweep: { model: string; vary: object };
    };
    expect(stored.sweep.model).toBe('bcpnn-sequences');
    expect(Object.keys(stored.sweep.vary)).toEqual(['patternOverlap', 'overlapLength', 'tauZPre']);
  });

  it('ends by building the report of the finished sweep and says where it is', async () => {
    const result = await runCli(['demo', '--out', 'quick-out', '--threads', '2', '--replicates', '1'], dir);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain('sweep demo-overlap-1x: 165 jobs planned');
    expect(result.stdout).toContain('report: quick-out/demo-overlap-1x/report/ (3 phase diagrams');
    expect(result.stdout).toContain('open quick-out/demo-overlap-1x/report/index.html in a browser');
    const reportDir = join(dir, 'quick-out', 'demo-overlap-1x', 'report');
    const files = (await readdir(reportDir)).sort();
    // One diagram per tauZPre value of the demo sweep (50, 75, 100).
    expect(files.filter((f) => f.endsWith('.svg'))).toEqual([
      'phase-success-tauZPre-100.svg',
      'phase-success-tauZPre-50.svg',
      'phase-success-tauZPre-75.svg',
    ]);
    const csv = (await readFile(join(reportDir, 'points.csv'), 'utf8')).trim().split('\n');
    expect(csv).toHaveLength(1 + 11 * 5 * 3);
    const html = await readFile(join(reportDir, 'index.html'), 'utf8');
    expect(html).toContain('165 of 165');
  });
});
