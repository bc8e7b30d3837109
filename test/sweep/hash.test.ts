import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';
import { expandJobs } from '../../shared/sweep/expand.js';
import { sweepHash } from '../../shared/sweep/hash.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { TEST_MODELS, useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

const run = promisify(execFile);

const BASE = {
  name: 'hashing',
  model: 'cpu-burn',
  seed: 4,
  replicates: 2,
  fixed: { burnMs: 1 },
  vary: { successRate: { between: [0.1, 0.9] } },
  sampler: { kind: 'lhs', points: 6 },
  report: { x: 'successRate' },
} as const;

const hashOf = (doc: unknown): string => parseSweepText(JSON.stringify(doc), 'h.json').hash;

describe('sweep hash', () => {
  it('is 64 hex digits and the same for YAML, JSON, other key order and explicit defaults', () => {
    const json = hashOf(BASE);
    expect(json).toMatch(/^[0-9a-f]{64}$/);
    const yaml = parseSweepText(
      [
        'sampler: { points: 6, kind: lhs }',
        'report: { x: successRate }',
        'vary:',
        '  successRate: { scale: linear, integer: false, between: [0.1, 0.9] }',
        'fixed: { burnMs: 1 }',
        'replicates: 2',
        'seed: 4',
        'model: cpu-burn',
        'name: hashing',
      ].join('\n'),
      'h.yaml',
    ).hash;
    expect(yaml).toBe(json);
  });

  it('changes with every job-defining field', () => {
    const base = hashOf(BASE);
    const variants: unknown[] = [
      { ...BASE, name: 'hashing-2' },
      { ...BASE, model: 'no-op', fixed: {}, vary: { value: { between: [0.1, 0.9] } }, report: { x: 'value' } },
      { ...BASE, seed: 5 },
      { ...BASE, replicates: 3 },
      { ...BASE, fixed: { burnMs: 2 } },
      { ...BASE, vary: { successRate: { between: [0.1, 0.8] } } },
      { ...BASE, vary: { successRate: { between: [0.1, 0.9], scale: 'log' } } },
      { ...BASE, sampler: { kind: 'lhs', points: 7 } },
      { ...BASE, sampler: { kind: 'sobol', points: 6 } },
    ];
    const hashes = variants.map(hashOf);
    for (const h of hashes) expect(h).not.toBe(base);
    expect(new Set(hashes).size).toBe(hashes.length);
  });

  it('changes with the model version', () => {
    const sweep = parseSweepText(JSON.stringify(BASE), 'h.json');
    expect(sweepHash(sweep.spec, sweep.model, sweep.baseParams)).toBe(sweep.hash);
    expect(sweepHash(sweep.spec, { ...sweep.model, version: `${sweep.model.version}.1` }, sweep.baseParams)).not.toBe(
      sweep.hash,
    );
  });

  it('does not change when a model default is written into fixed, and neither do the job keys', () => {
    // cpu-burn's default successRate is 1 (its description in test/fixtures/models/cpu-burn/); vary only burnMs here.
    const doc = { name: 'defaults', model: 'cpu-burn', seed: 1, vary: { burnMs: { list: [0, 1] } } };
    const implicit = parseSweepText(JSON.stringify(doc), 'd.json');
    const explicit = parseSweepText(JSON.stringify({ ...doc, fixed: { successRate: 1 } }), 'd.json');
    expect(explicit.spec.fixed).not.toEqual(implicit.spec.fixed);
    expect([...expandJobs(explicit)].map((j) => j.key)).toEqual([...expandJobs(implicit)].map((j) => j.key));
    expect(explicit.hash).toBe(implicit.hash);
    // A value other than the default changes both.
    const changed = parseSweepText(JSON.stringify({ ...doc, fixed: { successRate: 0.5 } }), 'd.json');
    expect(changed.hash).not.toBe(implicit.hash);
  });

  it('does not change with the report section', () => {
    expect(hashOf({ ...BASE, report: { metric: 'draw', bins: 12 } })).toBe(hashOf(BASE));
    const { report: _unused, ...noReport } = BASE;
    expect(hashOf(noReport)).toBe(hashOf(BASE));
  });

  it('follows the order of varied parameters for sampled sweeps but not for grids', () => {
    const sampled = (order: string[]): string =>
      hashOf({
        name: 'o',
        model: 'cpu-burn',
        sampler: { kind: 'sobol', points: 4 },
        vary: Object.fromEntries(
          order.map((n) => [n, n === 'burnMs' ? { between: [1, 9], integer: true } : { between: [0, 1] }]),
        ),
      });
    expect(sampled(['burnMs', 'successRate'])).not.toBe(sampled(['successRate', 'burnMs']));
    const grid = (order: string[]): string =>
      hashOf({
        name: 'o',
        model: 'cpu-burn',
        vary: Object.fromEntries(order.map((n) => [n, n === 'burnMs' ? { list: [1, 2] } : { list: [0, 1] }])),
      });
    expect(grid(['burnMs', 'successRate'])).toBe(grid(['successRate', 'burnMs']));
  });
});

describe('determinism across processes', () => {
  it('gives the same hash, points, keys and seeds in a separate process (built dist/)', async () => {
    const dist = join(process.cwd(), 'dist', 'shared', 'sweep');
    expect(existsSync(join(dist, 'load.js')), 'build first: npx tsc -p tsconfig.json').toBe(true);
    const text =
      'name: det\nmodel: cpu-burn\nseed: 123\nreplicates: 2\nsampler: { kind: random, points: 5 }\nvary:\n  successRate: { between: [0.01, 1], scale: log }\n  burnMs: { among: [0, 1, 2] }\n';
    const script = `
      const { registerModelFolders } = await import(${JSON.stringify(join(process.cwd(), 'dist', 'shared', 'models', 'external', 'model-folders.js'))});
      await registerModelFolders([${JSON.stringify(TEST_MODELS)}]);
      const { parseSweepText } = await import(${JSON.stringify(join(dist, 'load.js'))});
      const { expandJobs } = await import(${JSON.stringify(join(dist, 'expand.js'))});
      const sweep = parseSweepText(${JSON.stringify(text)}, 'det.yaml');
      const jobs = [...expandJobs(sweep)].map((j) => [j.key, j.seed, j.point, j.replicate]);
      process.stdout.write(JSON.stringify({ hash: sweep.hash, jobs }));
    `;
    const { stdout } = await run(process.execPath, ['--input-type=module', '-e', script]);
    const other = JSON.parse(stdout) as { hash: string; jobs: unknown[] };
    const here = parseSweepText(text, 'det.yaml');
    expect(other.hash).toBe(here.hash);
    expect(other.jobs).toEqual([...expandJobs(here)].map((j) => [j.key, j.seed, j.point, j.replicate]));
    expect(other.jobs).toHaveLength(10);
  });
});
