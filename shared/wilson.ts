/** Two-sided 95% normal quantile, z such that P(|Z| <= z) = 0.95. */
export const Z_95 = 1.959963984540054;

export interface Interval {
  readonly lo: number;
  readonly hi: number;
}

/**
 * Wilson score interval for a binomial proportion (k successes in n trials).
 * Unlike the normal approximation it stays inside [0, 1] and is sensible at
 * k = 0 and k = n, which phase diagrams hit all the time. Returns null when
 * there are no trials.
 */
export function wilsonInterval(successes: number, trials: number, z: number = Z_95): Interval | null {
  if (!Number.isInteger(trials) || trials < 0 || !Number.isInteger(successes) || successes < 0 || successes > trials) {
    throw new RangeError(`wilsonInterval needs integers 0 <= successes <= trials, got ${successes}/${trials}`);
  }
  if (trials === 0) return null;
  const p = successes / trials;
  const z2 = z * z;
  const denominator = 1 + z2 / trials;
  const centre = p + z2 / (2 * trials);
  const half = z * Math.sqrt((p * (1 - p)) / trials + z2 / (4 * trials * trials));
  // Exact bounds at the edges: rounding would otherwise give -1e-17 or 1+1e-16.
  const lo = successes === 0 ? 0 : Math.max(0, (centre - half) / denominator);
  const hi = successes === trials ? 1 : Math.min(1, (centre + half) / denominator);
  return { lo, hi };
}
