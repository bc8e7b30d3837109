import { gridSize } from '../samplers/grid.js';
import type { Point } from '../schemas/records.js';
import { type BetweenRange, isDiscrete, type Range, rangeSize, valueAt } from './ranges.js';

type PointValue = Point[string];

/**
 * Whether a drawn sweep drops repeated points: yes as soon as one range is
 * discrete (`list`, `among`, `integer: true`). With only continuous ranges
 * every draw counts, repeated or not.
 */
export function dropsRepeats(ranges: readonly Range[]): boolean {
  return !ranges.every((r) => 'between' in r && !r.integer);
}

/** True when every range is discrete and their combinations are whole numbers a double holds exactly. */
export function hasCombinationIndex(ranges: readonly Range[]): boolean {
  return ranges.every(isDiscrete) && gridSize(ranges.map(rangeSize)) <= Number.MAX_SAFE_INTEGER;
}

/**
 * For drawn sweeps whose ranges are all discrete: the position of a draw
 * among all combinations of values (mixed radix, first range slowest), from
 * its unit coordinates alone. Two draws get the same number exactly when
 * they give the same values: each range's values are distinct, and the
 * index per range is the one valueAt() picks.
 */
export function combinationIndexer(ranges: readonly Range[]): (u: readonly number[]) => number {
  const dims = ranges.length;
  const sizes = new Float64Array(ranges.map(rangeSize));
  // 0: list, among, or whole numbers on a linear scale; 1: whole numbers on a log scale.
  const logInteger = new Uint8Array(ranges.map((r) => ('between' in r && r.scale === 'log' ? 1 : 0)));
  return (u) => {
    let id = 0;
    for (let d = 0; d < dims; d++) {
      const n = sizes[d]!;
      let index: number;
      if (logInteger[d] === 1) {
        const range = ranges[d] as BetweenRange;
        index = (valueAt(range, u[d]!) as number) - range.between[0];
      } else {
        // As valueAt: floor(u * n) capped at n - 1 (for whole numbers: low + floor(u * (high - low + 1)) capped at high).
        index = Math.min(n - 1, Math.floor(u[d]! * n));
      }
      id = id * n + index;
    }
    return id;
  };
}

/**
 * Identity of a drawn point for dropping repeats: the combination index
 * when there is one, otherwise the JSON of the values. Two points get the
 * same identity exactly when their values are equal.
 */
export function pointIdentity(
  ranges: readonly Range[],
): (values: readonly PointValue[], u: readonly number[]) => string | number {
  if (hasCombinationIndex(ranges)) {
    const index = combinationIndexer(ranges);
    return (_values, u) => index(u);
  }
  return (values) => JSON.stringify(values);
}
