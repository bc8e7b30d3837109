import { describe, expect, it } from 'vitest';
import { fillNormal, zigguratNormal } from '../../shared/models/bcpnn-sequences/normal-noise.js';
import { createRandom } from '../../shared/random.js';

describe('the ziggurat normal sampler used for recall noise', () => {
  it('has the moments and quantiles of the standard normal', () => {
    const rng = createRandom(3, 'test-normal');
    const n = 400_000;
    const draws = new Float64Array(n);
    fillNormal(rng, draws, 1);
    let sum = 0;
    let sq = 0;
    let quartic = 0;
    let below1 = 0;
    let below2 = 0;
    let beyond3 = 0;
    let beyondR = 0;
    for (const x of draws) {
      sum += x;
      sq += x * x;
      quartic += x ** 4;
      if (x < 1) below1++;
      if (x < -2) below2++;
      if (Math.abs(x) > 3) beyond3++;
      if (x > 3.5) beyondR++;
    }
    // Standard normal facts (common practice, no source): mean 0, variance 1,
    // fourth moment 3, Phi(1) = 0.841345, Phi(-2) = 0.022750, P(|x|>3) = 0.002700,
    // P(x > 3.5) = 0.000233. Tolerances are about 4 standard errors at n = 400000.
    expect(Math.abs(sum / n)).toBeLessThan(0.0065);
    expect(Math.abs(sq / n - 1)).toBeLessThan(0.009);
    expect(Math.abs(quartic / n - 3)).toBeLessThan(0.05);
    expect(Math.abs(below1 / n - 0.841345)).toBeLessThan(0.0025);
    expect(Math.abs(below2 / n - 0.02275)).toBeLessThan(0.001);
    expect(Math.abs(beyond3 / n - 0.0027)).toBeLessThan(0.00035);
    expect(Math.abs(beyondR / n - 0.000233)).toBeLessThan(0.0001);
  });

  it('gives the same numbers one at a time as in bulk, scaled by sigma', () => {
    const bulk = new Float64Array(5000);
    fillNormal(createRandom(9, 'x'), bulk, 0.5);
    const one = createRandom(9, 'x');
    for (const x of bulk) expect(x).toBe(0.5 * zigguratNormal(one));
  });
});
