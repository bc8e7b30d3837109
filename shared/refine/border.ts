import { wilsonInterval } from '../wilson.js';

/** One point of a row: its position along the row and its tally. */
export interface RowPoint {
  readonly x: number;
  readonly successes: number;
  readonly trials: number;
}

export interface BorderEstimate {
  /** Interpolated crossing of the rate, or null when it never crosses the level in this row. */
  readonly x: number | null;
  /** Where the Wilson bounds cross; null at an end means the band runs past that end of the row. */
  readonly lo: number | null;
  readonly hi: number | null;
  /** The two points that bracket the crossing. */
  readonly left: number | null;
  readonly right: number | null;
}

/** First x where a curve through the points crosses `level`, linear between neighbours. */
function crossing(xs: readonly number[], ys: readonly number[], level: number): number | null {
  for (let i = 0; i + 1 < xs.length; i++) {
    const a = ys[i]! - level;
    const b = ys[i + 1]! - level;
    if (a === 0) return xs[i]!;
    if (a * b < 0) return xs[i]! + (a / (a - b)) * (xs[i + 1]! - xs[i]!);
  }
  return ys.length > 0 && ys[ys.length - 1] === level ? xs[xs.length - 1]! : null;
}

/**
 * Where the rate of a row crosses `level`. The estimate interpolates the
 * observed rates linearly between the bracketing points. The band inverts
 * the Wilson intervals: it runs between where the lower and the upper bound
 * curves (interpolated the same way) cross the level, which uses the same
 * intervals the decisions used and needs no resampling. A bound that never
 * crosses leaves its side of the band open (null): the data do not rule out
 * a border up to that end of the row.
 */
export function rowBorder(points: readonly RowPoint[], level: number, z: number): BorderEstimate {
  const row = points.filter((p) => p.trials > 0).sort((a, b) => a.x - b.x);
  const xs = row.map((p) => p.x);
  const rates = row.map((p) => p.successes / p.trials);
  const los = row.map((p) => wilsonInterval(p.successes, p.trials, z)!.lo);
  const his = row.map((p) => wilsonInterval(p.successes, p.trials, z)!.hi);
  const x = crossing(xs, rates, level);
  let left: number | null = null;
  let right: number | null = null;
  if (x !== null) {
    const i = xs.findIndex((v, k) => k + 1 < xs.length && v <= x && xs[k + 1]! >= x);
    left = i < 0 ? x : xs[i]!;
    right = i < 0 ? x : xs[i + 1]!;
  }
  const lower = crossing(xs, los, level);
  const upper = crossing(xs, his, level);
  // Falling rate: the lower bounds leave the level first (left end of the band), the upper bounds last.
  const falling = rates.length > 0 && (x === null ? rates[0]! > level : rates[0]! >= rates[rates.length - 1]!);
  const leftBound = falling ? lower : upper;
  const rightBound = falling ? upper : lower;
  const lo = leftBound === null ? null : Math.min(leftBound, x ?? leftBound);
  const hi = rightBound === null ? null : Math.max(rightBound, x ?? rightBound);
  return { x, lo, hi, left, right };
}
