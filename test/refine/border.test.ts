import { describe, expect, it } from 'vitest';
import { rowBorder } from '../../shared/refine/border.js';

const Z = 1.959963984540054;

describe('the border of a row', () => {
  it('interpolates the crossing linearly between the bracketing points', () => {
    // Rates 1, 0.75, 0.25, 0: the 0.5 crossing is halfway between x = 1 and x = 2 (by hand).
    const border = rowBorder(
      [
        { x: 0, successes: 40, trials: 40 },
        { x: 1, successes: 30, trials: 40 },
        { x: 2, successes: 10, trials: 40 },
        { x: 3, successes: 0, trials: 40 },
      ],
      0.5,
      Z,
    );
    expect(border.x).toBeCloseTo(1.5, 12);
    expect(border.left).toBe(1);
    expect(border.right).toBe(2);
    // Wilson 95% for 30/40 is [0.5980, 0.8582] and for 10/40 [0.1419, 0.4020] (Wilson 1927 formula, by hand):
    // neither holds 0.5, so the band lies strictly inside (1, 2) and around 1.5.
    expect(border.lo!).toBeGreaterThan(1);
    expect(border.lo!).toBeLessThan(1.5);
    expect(border.hi!).toBeGreaterThan(1.5);
    expect(border.hi!).toBeLessThan(2);
    // The lower-bound curve goes 1 -> 0.5980 -> 0.1419 between x = 1 and 2: crossing at 1 + 0.0980/0.4561 = 1.2149.
    expect(border.lo!).toBeCloseTo(1.2149, 3);
  });

  it('leaves the band open at the end where a bound never crosses the level', () => {
    // 3 of 4 at the last point: its upper bound stays above 0.5, so the border may lie past the row.
    const border = rowBorder(
      [
        { x: 0, successes: 20, trials: 20 },
        { x: 1, successes: 3, trials: 4 },
      ],
      0.5,
      Z,
    );
    expect(border.x).toBeNull();
    expect(border.hi).toBeNull();
  });

  it('handles a rising rate the same way', () => {
    const border = rowBorder(
      [
        { x: 0, successes: 0, trials: 40 },
        { x: 1, successes: 10, trials: 40 },
        { x: 2, successes: 30, trials: 40 },
      ],
      0.5,
      Z,
    );
    expect(border.x).toBeCloseTo(1.5, 12);
    expect(border.lo!).toBeLessThan(1.5);
    expect(border.hi!).toBeGreaterThan(1.5);
  });
});
