import { describe, expect, it } from 'vitest';
import { parseSweepText } from '../../shared/sweep/load.js';
import { iteratePoints } from '../../shared/sweep/points.js';
import { useTestModels } from '../fixtures/test-models.js';

// no-op and cpu-burn are test models (test/fixtures/models), not built in.
await useTestModels();

/** One-sample Kolmogorov-Smirnov statistic of `values` against the CDF `cdf`. */
function ksStatistic(values: readonly number[], cdf: (x: number) => number): number {
  const sorted = [...values].sort((a, b) => a - b);
  const n = sorted.length;
  let d = 0;
  sorted.forEach((x, i) => {
    const f = cdf(x);
    d = Math.max(d, (i + 1) / n - f, f - i / n);
  });
  return d;
}

const N = 2000;
// 5% critical value of the one-sample KS statistic for large n (Massey 1951).
const KS_CRITICAL = 1.36 / Math.sqrt(N);

function draws(range: string, seed = 17): number[] {
  const sweep = parseSweepText(
    `name: r\nmodel: no-op\nseed: ${seed}\nsampler: { kind: random, points: ${N} }\nvary:\n  value: ${range}\n`,
    'r.yaml',
  );
  return [...iteratePoints(sweep)].map((p) => p['value'] as number);
}

describe('random sampler distribution', () => {
  it('draws uniformly on a linear range (Kolmogorov-Smirnov, Massey 1951)', () => {
    const values = draws('{ between: [-3, 5] }');
    expect(values).toHaveLength(N);
    for (const v of values) {
      expect(v).toBeGreaterThanOrEqual(-3);
      expect(v).toBeLessThanOrEqual(5);
    }
    expect(ksStatistic(values, (x) => (x + 3) / 8)).toBeLessThan(KS_CRITICAL);
  });

  it('draws uniformly in the logarithm on a log range (Kolmogorov-Smirnov on log values)', () => {
    const values = draws('{ between: [0.5, 2000], scale: log }', 23);
    const lo = Math.log(0.5);
    const hi = Math.log(2000);
    expect(ksStatistic(values.map(Math.log), (x) => (x - lo) / (hi - lo))).toBeLessThan(KS_CRITICAL);
    // A linear-uniform law would put the median near 1000; log-uniform puts it near sqrt(0.5 * 2000) = 31.6.
    const median = [...values].sort((a, b) => a - b)[N / 2]!;
    expect(median).toBeGreaterThan(20);
    expect(median).toBeLessThan(50);
  });

  it('covers every integer of an integer range about equally often', () => {
    const sweep = parseSweepText(
      `name: r\nmodel: cpu-burn\nseed: 5\nsampler: { kind: random, points: ${N} }\nvary:\n  burnMs: { between: [3, 9], integer: true }\n  successRate: { between: [0, 1] }\n`,
      'r.yaml',
    );
    const counts = new Map<number, number>();
    for (const p of iteratePoints(sweep))
      counts.set(p['burnMs'] as number, (counts.get(p['burnMs'] as number) ?? 0) + 1);
    expect([...counts.keys()].sort((a, b) => a - b)).toEqual([3, 4, 5, 6, 7, 8, 9]);
    const expected = N / 7;
    const chiSquare = [...counts.values()].reduce((s, c) => s + (c - expected) ** 2 / expected, 0);
    // 0.1% critical value of chi-square with 6 degrees of freedom is 22.46 (from memory; standard tables).
    expect(chiSquare).toBeLessThan(22.46);
  });

  it('covers every integer of a log-scale integer range', () => {
    const values = draws('{ between: [1, 12], scale: log, integer: true }', 3);
    // Discrete values repeat and are merged, so every one of the 12 integers appears once.
    expect([...values].sort((a, b) => a - b)).toEqual(Array.from({ length: 12 }, (_, k) => k + 1));
  });
});
