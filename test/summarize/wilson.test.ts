import { describe, expect, it } from 'vitest';
import { wilsonInterval } from '../../shared/wilson.js';

// Worked examples of Newcombe (1998, Stat Med 17:857-872), Table I, method 3
// (score interval without continuity correction); SciPy 1.17
// binomtest(k, n).proportion_ci(method='wilson') gives the same numbers.
const NEWCOMBE: ReadonlyArray<readonly [number, number, number, number]> = [
  [81, 263, 0.2553, 0.3662],
  [15, 148, 0.0624, 0.1605],
  [0, 20, 0, 0.1611],
  [1, 29, 0.0061, 0.1718],
];

describe('wilsonInterval', () => {
  for (const [k, n, lo, hi] of NEWCOMBE) {
    it(`gives ${lo} to ${hi} for ${k} successes in ${n} trials, as Newcombe (1998) does`, () => {
      const interval = wilsonInterval(k, n);
      expect(interval).not.toBeNull();
      expect(Number(interval?.lo.toFixed(4))).toBe(lo);
      expect(Number(interval?.hi.toFixed(4))).toBe(hi);
    });
  }

  it('gives exactly 1 as the upper end when every trial succeeded', () => {
    // SciPy 1.17 binomtest(20, 20).proportion_ci(method='wilson'): 0.8389 to 1.0 (the mirror of 0/20).
    const interval = wilsonInterval(20, 20);
    expect(interval?.hi).toBe(1);
    expect(Number(interval?.lo.toFixed(4))).toBe(0.8389);
  });

  it('has no interval without trials', () => {
    expect(wilsonInterval(0, 0)).toBeNull();
  });

  it('rejects more successes than trials', () => {
    expect(() => wilsonInterval(5, 4)).toThrow(RangeError);
  });
});
