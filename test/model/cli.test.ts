import { execFile } from 'node:child_process';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { params, referenceConfig } from './helpers.js';
import { referenceRecall, referenceTrain } from './reference-model.js';

// These tests run the built CLI (dist/): build first, as `npm test` does.
const run = promisify(execFile);
const CLI = join(process.cwd(), 'bin', 'recallscape.js');

async function cli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  try {
    const { stdout, stderr } = await run(process.execPath, [CLI, ...args], { encoding: 'utf8' });
    return { code: 0, stdout, stderr };
  } catch (error) {
    const e = error as { code?: number; stdout?: string; stderr?: string };
    return { code: e.code ?? -1, stdout: e.stdout ?? '', stderr: e.stderr ?? '' };
  }
}

let dir = '';
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'rs-simulate-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('recallscape simulate', () => {
  it('prints byte-identical metrics JSON in two separate processes', async () => {
    const args = [
      'simulate',
      '--set',
      'patternOverlap=0.4',
      '--set',
      'overlapLength=2',
      '--set',
      'noise=0.3',
      '--seed',
      '12',
    ];
    const [a, b] = await Promise.all([cli(args), cli(args)]);
    expect(a.code).toBe(0);
    expect(a.stdout).toBe(b.stdout);
    const metrics = JSON.parse(a.stdout) as Record<string, unknown>;
    expect(typeof metrics['success']).toBe('boolean');
    expect(metrics['achievedOverlap']).toBe(0.4);
  });

  it('exits 2 on a time constant below dt, naming the field, with no stack trace', async () => {
    const r = await cli(['simulate', '--set', 'tauP=0.5']);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toContain('tauP');
    expect(r.stderr).not.toMatch(/^\s+at /m);
  });

  it('exits 2 on non-finite, negative and misplaced values, naming each field', async () => {
    const sets = ['noise=NaN', 'cueStrength=Infinity', 'gapDuration=-1', 'overlapStart=0', 'hypercolumns=0'];
    const r = await cli(['simulate', ...sets.flatMap((s) => ['--set', s])]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    for (const field of ['noise', 'cueStrength', 'gapDuration', 'overlapStart', 'hypercolumns']) {
      expect(r.stderr).toMatch(
        new RegExp(`^recallscape: invalid parameters for model bcpnn-sequences: ${field}: ${field} must be`, 'm'),
      );
    }
    expect(r.stderr).not.toMatch(/^\s+at /m);
  });

  it('exits 2 on a bad seed and on a params file that is not JSON', async () => {
    const bad = join(dir, 'bad.json');
    await writeFile(bad, '{ not json');
    const seed = await cli(['simulate', '--seed', '1.5']);
    expect(seed.code).toBe(2);
    expect(seed.stderr).toContain('--seed');
    const r = await cli(['simulate', '--params', bad]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('--params');
  });

  it('writes a trace CSV whose rows follow the step-by-step reference', async () => {
    const input = {
      sequences: [
        [
          [0, 1],
          [1, 2],
          [2, 0],
        ],
        [
          [3, 3],
          [1, 0],
          [0, 2],
        ],
      ],
      minicolumns: 4,
      epochs: 2,
      patternDuration: 30,
      restDuration: 20,
      cueDuration: 10,
      recallDuration: 120,
      tauP: 400,
    };
    const file = join(dir, 'params.json');
    await writeFile(file, JSON.stringify(input));
    const tracePath = join(dir, 'trace.csv');
    const r = await cli(['simulate', '--params', file, '--set', 'dt=0.5', '--trace', tracePath]);
    expect(r.code).toBe(0);
    const lines = (await readFile(tracePath, 'utf8')).trimEnd().split('\n');
    expect(lines[0]).toBe('recall,t_ms,p0,p1,p2,p3,p4,p5');
    const stepsPerRecall = 10 / 0.5 + 120 / 0.5;
    expect(lines.length - 1).toBe(2 * stepsPerRecall);
    const p = params({ ...input, dt: 0.5 });
    const config = referenceConfig(p, input.sequences);
    const ref = referenceTrain(config);
    for (const s of [0, 1]) {
      const expected = referenceRecall(config, ref, s);
      for (let t = 0; t < stepsPerRecall; t++) {
        const cells = lines[1 + s * stepsPerRecall + t]!.split(',').map(Number);
        expect(cells[0]).toBe(s);
        expect(cells[1]).toBe(t * 0.5);
        for (let k = 0; k < 6; k++) expect(Math.abs(cells[2 + k]! - expected[t * 6 + k]!)).toBeLessThanOrEqual(1e-6);
      }
    }
  });
});
