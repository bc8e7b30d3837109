import { describe, expect, it } from 'vitest';
import { jobKey, jobSeed } from '../../shared/job-identity.js';
import { JobPayloadSchema } from '../../shared/schemas/records.js';
import { assertJobLimit, countJobs, expandJobs, toPayload } from '../../shared/sweep/expand.js';
import { parseSweepText } from '../../shared/sweep/load.js';
import { iteratePoints } from '../../shared/sweep/points.js';
import { SweepFileSchema } from '../../shared/sweep/schema.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

describe('grid expansion', () => {
  it('lists the full product with the first varied parameter slowest', () => {
    const sweep = parseSweepText(
      'name: g\nmodel: cpu-burn\nfixed: { burnMs: 0 }\nvary:\n  successRate: { list: [0.2, 0.8] }\n',
      'g.yaml',
    );
    expect([...iteratePoints(sweep)]).toEqual([{ successRate: 0.2 }, { successRate: 0.8 }]);
    const two = parseSweepText(
      'name: g\nmodel: cpu-burn\nvary:\n  burnMs: { list: [5, 1, 3] }\n  successRate: { from: 0, to: 1, steps: 3 }\n',
      'g.yaml',
    );
    expect([...iteratePoints(two)]).toEqual([
      { burnMs: 5, successRate: 0 },
      { burnMs: 5, successRate: 0.5 },
      { burnMs: 5, successRate: 1 },
      { burnMs: 1, successRate: 0 },
      { burnMs: 1, successRate: 0.5 },
      { burnMs: 1, successRate: 1 },
      { burnMs: 3, successRate: 0 },
      { burnMs: 3, successRate: 0.5 },
      { burnMs: 3, successRate: 1 },
    ]);
    expect(two.pointCount).toBe(9);
  });

  it('spaces a linear grid evenly with clean decimals and both ends included', () => {
    const sweep = parseSweepText('name: g\nmodel: no-op\nvary:\n  value: { from: 0, to: 1, steps: 11 }\n', 'g.yaml');
    // Worked by hand: 0, 0.1, ..., 1 (common practice, no source).
    expect([...iteratePoints(sweep)].map((p) => p['value'])).toEqual([
      0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1,
    ]);
  });

  it('spaces a log grid evenly in the logarithm', () => {
    const sweep = parseSweepText(
      'name: g\nmodel: no-op\nvary:\n  value: { from: 1, to: 1000, steps: 4, scale: log }\n',
      'g.yaml',
    );
    // Decades 1, 10, 100, 1000 (common practice, no source).
    expect([...iteratePoints(sweep)].map((p) => p['value'])).toEqual([1, 10, 100, 1000]);
    const halves = parseSweepText(
      'name: g\nmodel: no-op\nvary:\n  value: { from: 20, to: 320, steps: 5, scale: log }\n',
      'g.yaml',
    );
    // Doublings 20, 40, 80, 160, 320 (worked by hand).
    expect([...iteratePoints(halves)].map((p) => p['value'])).toEqual([20, 40, 80, 160, 320]);
  });

  it('takes lists of strings and booleans as grid values', () => {
    // No registered model takes strings yet, so this checks the point generator on a schema-valid spec.
    const spec = SweepFileSchema.parse({
      name: 'g',
      vary: { mode: { list: ['fast', 'slow'] }, plastic: { list: [true, false] } },
    });
    expect([...iteratePoints({ spec })]).toEqual([
      { mode: 'fast', plastic: true },
      { mode: 'fast', plastic: false },
      { mode: 'slow', plastic: true },
      { mode: 'slow', plastic: false },
    ]);
  });

  it('is a single empty point when nothing varies', () => {
    const sweep = parseSweepText('name: g\nmodel: no-op\nreplicates: 3\n', 'g.yaml');
    expect([...iteratePoints(sweep)]).toEqual([{}]);
    expect(countJobs(sweep)).toBe(3);
  });
});

describe('job expansion', () => {
  it('gives each replicate its own key and seed from job-identity, with full parameters', () => {
    const sweep = parseSweepText(
      'name: j\nmodel: cpu-burn\nseed: 9\nreplicates: 3\nfixed: { burnMs: 2 }\nvary:\n  successRate: { list: [0.25, 0.75] }\n',
      'j.yaml',
    );
    const jobs = [...expandJobs(sweep)];
    expect(jobs).toHaveLength(6);
    expect(countJobs(sweep)).toBe(6);
    expect(new Set(jobs.map((j) => j.key)).size).toBe(6);
    expect(jobs.map((j) => [j.point['successRate'], j.replicate])).toEqual([
      [0.25, 0],
      [0.25, 1],
      [0.25, 2],
      [0.75, 0],
      [0.75, 1],
      [0.75, 2],
    ]);
    for (const job of jobs) {
      // Full parameters: the default-free model has both params filled in.
      expect(job.params).toEqual({ burnMs: 2, successRate: job.point['successRate'] });
      expect(job.key).toBe(
        jobKey('cpu-burn', '1', { burnMs: 2, successRate: job.point['successRate'] }, job.replicate),
      );
      expect(job.seed).toBe(jobSeed(9, job.key));
    }
  });

  it('puts model defaults into the parameters and so into the key', () => {
    const sweep = parseSweepText('name: j\nmodel: cpu-burn\nvary:\n  successRate: { list: [0.5] }\n', 'j.yaml');
    const [job] = [...expandJobs(sweep)];
    // cpu-burn's default burnMs is 100 (test/fixtures/models/cpu-burn/recallscape-model.json).
    expect(job!.params).toEqual({ burnMs: 100, successRate: 0.5 });
    const explicit = parseSweepText(
      'name: j\nmodel: cpu-burn\nfixed: { burnMs: 100 }\nvary:\n  successRate: { list: [0.5] }\n',
      'j.yaml',
    );
    expect([...expandJobs(explicit)][0]!.key).toBe(job!.key);
  });

  it('builds payloads that the job payload schema accepts', () => {
    const sweep = parseSweepText(
      'name: pay.load_1\nmodel: no-op\nreplicates: 2\nvary:\n  value: { list: [1, 2] }\n',
      'p.yaml',
    );
    for (const job of expandJobs(sweep)) {
      const payload = toPayload(sweep, job);
      expect(JobPayloadSchema.safeParse(payload).success).toBe(true);
      expect(payload.sweep).toEqual({ name: 'pay.load_1', hash: sweep.hash });
      expect(payload.params).toEqual({ value: job.point['value'] });
    }
  });

  it('expands a million-job sweep lazily', () => {
    const sweep = parseSweepText(
      'name: big\nmodel: no-op\nreplicates: 1000\nvary:\n  value: { from: 1, to: 1000, steps: 1000 }\n',
      'big.yaml',
    );
    expect(countJobs(sweep)).toBe(1_000_000);
    const generator = expandJobs(sweep);
    const first = generator.next();
    expect(first.done).toBe(false);
    expect(first.value).toMatchObject({ point: { value: 1 }, replicate: 0 });
    generator.return(undefined);
  });

  it('refuses a sweep over the job limit, and accepts one at it', () => {
    const sweep = parseSweepText(
      'name: lim\nmodel: no-op\nreplicates: 5\nvary:\n  value: { list: [1, 2, 3, 4] }\n',
      'l.yaml',
    );
    expect(() => assertJobLimit(sweep, 19)).toThrow(
      'sweep has 20 jobs, more than the limit 19; pass --yes to run it anyway or raise --max-jobs',
    );
    expect(() => assertJobLimit(sweep, 20)).not.toThrow();
  });
});

describe('sampled expansion', () => {
  it('maps among values by floor(u * n) and drops repeated discrete points', () => {
    // Sobol dimension 1 over 8 points is {k/8}; floor(u*4) visits each of the 4 values twice (van der Corput).
    const sweep = parseSweepText(
      'name: s\nmodel: no-op\nsampler: { kind: sobol, points: 8 }\nvary:\n  value: { among: [10, 20, 30, 40] }\n',
      's.yaml',
    );
    expect([...iteratePoints(sweep)].map((p) => p['value'])).toEqual([10, 30, 40, 20]);
    expect(sweep.pointCount).toBe(4);
  });

  it('gives the same lhs points for the same seed and other points for another seed', () => {
    const text = (seed: number): string =>
      `name: s\nmodel: cpu-burn\nseed: ${seed}\nsampler: { kind: lhs, points: 16 }\nvary:\n  successRate: { between: [0, 1] }\n  burnMs: { between: [1, 50], integer: true }\n`;
    const a = [...iteratePoints(parseSweepText(text(1), 'a.yaml'))];
    expect([...iteratePoints(parseSweepText(text(1), 'b.yaml'))]).toEqual(a);
    expect([...iteratePoints(parseSweepText(text(2), 'a.yaml'))]).not.toEqual(a);
    // One point per sixteenth of [0, 1] (McKay, Beckman & Conover 1979).
    expect(a.map((p) => Math.floor((p['successRate'] as number) * 16)).sort((x, y) => x - y)).toEqual(
      Array.from({ length: 16 }, (_, k) => k),
    );
  });
});
