import { describe, expect, it } from 'vitest';
import { expNonPositive } from '../../shared/fast-exp.js';

/** Distance from v to the next double above it (v >= 0). */
function ulp(v: number): number {
  const bits = new Float64Array([v]);
  const words = new BigInt64Array(bits.buffer);
  words[0] = (words[0] as bigint) + 1n;
  return (bits[0] as number) - v;
}

/** Smallest positive normal double, 2^-1022. */
const MIN_NORMAL = 2 ** -1022;

// Reference: Math.exp, the general-purpose implementation of the platform.
// The method under test is Tang (1989), "Table-driven implementation of the
// exponential function in IEEE floating-point arithmetic".
describe('the table-driven exp used in the softmax', () => {
  it('agrees with Math.exp within one unit in the last place over [-745, 0]', () => {
    let worstUlps = 0;
    let worstRelative = 0;
    let compared = 0;
    // An irrational step, so that the points do not fall on the table's grid.
    for (let x = 0; x >= -745; x -= 0.000731 * Math.SQRT2) {
      const fast = expNonPositive(x);
      const ref = Math.exp(x);
      worstUlps = Math.max(worstUlps, Math.abs(fast - ref) / ulp(ref));
      if (ref >= MIN_NORMAL) worstRelative = Math.max(worstRelative, Math.abs(fast - ref) / ref);
      compared++;
    }
    expect(compared).toBeGreaterThan(700_000);
    expect(worstUlps).toBeLessThanOrEqual(1);
    // One ulp is at most 2^-52 (2.2e-16) relative to the value.
    expect(worstRelative).toBeLessThanOrEqual(2 ** -52);
  });

  it('agrees within one unit in the last place near the table points and on small arguments', () => {
    const step = Math.LN2 / 64;
    const far: number[] = [];
    const check = (x: number): void => {
      const ref = Math.exp(x);
      if (Math.abs(expNonPositive(x) - ref) > ulp(ref)) far.push(x);
    };
    for (let k = -1000; k <= 0; k++) {
      for (const x of [k * step, k * step + step / 2, k * step - step / 2, k * step * (1 + 1e-15)]) {
        if (x <= 0) check(x);
      }
    }
    for (let e = -300; e <= 0; e++) check(-(10 ** e) * 1.37);
    expect(far).toEqual([]);
  });

  it('handles the edge cases exactly as Math.exp does', () => {
    expect(expNonPositive(0)).toBe(1);
    expect(expNonPositive(-0)).toBe(1);
    expect(expNonPositive(-1e-300)).toBe(1);
    expect(expNonPositive(-Number.MIN_VALUE)).toBe(1);
    // exp(-745) = 4.94e-324 rounds to the smallest subnormal, 2^-1074.
    expect(expNonPositive(-745)).toBe(Number.MIN_VALUE);
    expect(expNonPositive(-745)).toBe(Math.exp(-745));
    // Below about -745.1332 the result rounds to 0.
    expect(expNonPositive(-745.2)).toBe(0);
    expect(expNonPositive(-746)).toBe(0);
    expect(expNonPositive(-1e308)).toBe(0);
    expect(expNonPositive(Number.NEGATIVE_INFINITY)).toBe(0);
    expect(expNonPositive(Number.NaN)).toBeNaN();
    // exp(-1) = 1/e = 0.36787944117144233 (to double precision, from memory).
    expect(expNonPositive(-1)).toBe(0.36787944117144233);
  });

  it('agrees with Math.exp in the subnormal range to the last representable step', () => {
    // Results below 2^-1022 are subnormal: spacing 2^-1074 = Number.MIN_VALUE.
    let compared = 0;
    let worst = 0;
    for (let x = -708.4; x >= -745.14; x -= 0.00173) {
      const ref = Math.exp(x);
      if (ref >= MIN_NORMAL) throw new Error(`exp(${x}) is not subnormal`);
      worst = Math.max(worst, Math.abs(expNonPositive(x) - ref));
      compared++;
    }
    expect(compared).toBeGreaterThan(20_000);
    expect(worst).toBeLessThanOrEqual(Number.MIN_VALUE);
  });

  it('gives Math.exp itself for positive arguments', () => {
    for (const x of [1e-300, 0.5, 1, 10, 709, 710, Number.POSITIVE_INFINITY])
      expect(expNonPositive(x)).toBe(Math.exp(x));
  });
});
