import { describe, expect, it } from 'vitest';
import { geometricSum } from '../../shared/models/bcpnn-sequences/training.js';

/** sum_{n=1..T} c^(T-n) q^n by direct summation in the order of the definition. */
function direct(c: number, q: number, T: number): number {
  let acc = 0;
  let qn = 1;
  for (let n = 1; n <= T; n++) {
    qn *= q;
    acc = c * acc + qn;
  }
  return acc;
}

describe('the closed-form geometric sum of a training segment', () => {
  it('agrees with direct summation, including q = c, q close to c, zeros and long segments', () => {
    const cases: [number, number, number][] = [
      [0.999, 0.98, 100],
      [0.9998, 0.9998, 5000],
      [0.9998, 0.9998 * (1 - 1e-12), 20_000],
      [0.9998, 0.99981, 20_000],
      [0.5, 1, 50],
      [0.9998, 1, 100_000],
      [0, 0.7, 10],
      [0.9, 0, 10],
      [0, 0, 5],
      [0.98 * 0.8, 0.98, 3000],
      [0.99999, 0.999, 1],
    ];
    for (const [c, q, T] of cases) {
      const want = direct(c, q, T);
      expect(Math.abs(geometricSum(c, q, T) - want), `${c} ${q} ${T}`).toBeLessThanOrEqual(
        1e-11 * Math.max(1, Math.abs(want)),
      );
    }
  });

  it('is zero for an empty segment', () => {
    expect(geometricSum(0.9, 0.8, 0)).toBe(0);
  });
});
