import { describe, expect, it } from 'vitest';
import { normalCdf, twoSidedZ } from '../../shared/refine/normal-quantile.js';
import { batchSizes, pointState, stopConfidence } from '../../shared/refine/sequential.js';
import { wilsonInterval } from '../../shared/wilson.js';

const settings = { level: 0.5, confidence: 0.95, replicates: { start: 8, max: 64 } };

describe('normal quantiles for the stopping rule', () => {
  it('gives the tabulated two-sided normal quantiles', () => {
    // Standard normal table values (e.g. Abramowitz & Stegun 1964, table 26.5): z(0.95) = 1.959964, z(0.99) = 2.575829, z(0.9875) = 2.497705.
    expect(twoSidedZ(0.95)).toBeCloseTo(1.959964, 6);
    expect(twoSidedZ(0.99)).toBeCloseTo(2.575829, 6);
    expect(twoSidedZ(0.9875)).toBeCloseTo(2.497705, 5);
    // Phi(1) = 0.841344746 (same table).
    expect(normalCdf(1)).toBeCloseTo(0.841344746, 9);
    expect(normalCdf(-1)).toBeCloseTo(0.158655254, 9);
  });
});

describe('sequential replicates', () => {
  it('doubles the batch from start up to max, capping the last batch', () => {
    expect(batchSizes({ start: 8, max: 64 })).toEqual([8, 16, 32, 64]);
    expect(batchSizes({ start: 5, max: 12 })).toEqual([5, 10, 12]);
    expect(batchSizes({ start: 4, max: 4 })).toEqual([4]);
  });

  it('splits the error over the looks (Bonferroni) for the stopping confidence', () => {
    // Four looks at 95% overall: each look at 1 - 0.05/4 = 0.9875 (worked by hand).
    expect(stopConfidence(settings)).toBeCloseTo(0.9875, 12);
  });

  it('decides a point at its first batch when every trial agrees', () => {
    const all = pointState(settings, () => true);
    expect(all).toMatchObject({ kind: 'above', replicates: 8, successes: 8, counted: 8 });
    const none = pointState(settings, () => false);
    expect(none).toMatchObject({ kind: 'below', replicates: 8 });
  });

  it('asks for the next batch while the interval still holds the level', () => {
    // 6 of 8: Wilson at z = 2.4977 is about [0.40, 0.93], holding 0.5 (Wilson 1927 formula, by hand).
    const state = pointState(settings, (r) => (r < 8 ? r < 6 : undefined));
    expect(state).toEqual({ kind: 'running', replicates: 16 });
  });

  it('stops undecided at max when the rate sits on the level', () => {
    const state = pointState(settings, (r) => r % 2 === 0);
    expect(state).toMatchObject({ kind: 'undecided', replicates: 64, successes: 32, counted: 64 });
  });

  it('leaves out trials whose metric is not 0 or 1 without waiting for them', () => {
    // 6 of 6 counted: Wilson lower bound n/(n + z^2) = 6/(6 + 2.4977^2) = 0.490, not above 0.5;
    // 14 of 14 after the second batch: 14/(14 + 6.2386) = 0.692 (Wilson 1927, by hand).
    const state = pointState(settings, (r) => (r < 2 ? null : true));
    expect(state).toMatchObject({ kind: 'above', replicates: 16, successes: 14, counted: 14 });
  });

  it('uses the Wilson interval that matches Newcombe (1998) table values', () => {
    // Newcombe (1998), Statistics in Medicine 17:857, Table I, method 3 (Wilson score):
    // 81/263 -> 0.2553 to 0.3662; 15/148 -> 0.0624 to 0.1605; 0/20 -> 0 to 0.1611.
    const a = wilsonInterval(81, 263, twoSidedZ(0.95))!;
    expect(a.lo).toBeCloseTo(0.2553, 4);
    expect(a.hi).toBeCloseTo(0.3662, 4);
    const b = wilsonInterval(15, 148, twoSidedZ(0.95))!;
    expect(b.lo).toBeCloseTo(0.0624, 4);
    expect(b.hi).toBeCloseTo(0.1605, 4);
    const c = wilsonInterval(0, 20, twoSidedZ(0.95))!;
    expect(c.hi).toBeCloseTo(0.1611, 4);
  });
});
