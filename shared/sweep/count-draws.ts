import type { Point } from '../schemas/records.js';
import { combinationIndexer, hasCombinationIndex } from './draw-identity.js';
import { type BetweenRange, type Range, rangeSize, valueAt } from './ranges.js';

/**
 * Greatest distance between the unit coordinates of two draws whose values
 * of a continuous range are equal after rounding to 12 significant digits
 * (with room to spare): equal values need coordinates at least this close.
 */
function closeness(range: BetweenRange): number {
  const [a, b] = range.between;
  if (range.scale === 'log') return 1e-10 / Math.abs(Math.log(b) - Math.log(a)) + 1e-15;
  const unit = 10 ** (Math.floor(Math.log10(Math.max(Math.abs(a), Math.abs(b)))) - 11);
  return (4 * unit) / (b - a) + 1e-15;
}

/** 53 bits from the per-range indices of an all-discrete draw: equal indices give equal hashes. */
function indexHash(ranges: readonly Range[]): (u: readonly number[]) => number {
  const sizes = ranges.map(rangeSize);
  return (u) => {
    let h1 = 0x811c9dc5;
    let h2 = 0x01000193;
    for (let d = 0; d < ranges.length; d++) {
      const range = ranges[d]!;
      const n = sizes[d]!;
      const index =
        'between' in range && range.scale === 'log'
          ? (valueAt(range, u[d]!) as number) - range.between[0]
          : Math.min(n - 1, Math.floor(u[d]! * n));
      const low = index % 0x100000000;
      const high = Math.floor(index / 0x100000000);
      h1 = Math.imul(h1 ^ low, 0x01000193) ^ high;
      h2 = Math.imul(h2 ^ high, 0x5bd1e995) ^ low;
    }
    return (h1 >>> 0) * 0x200000 + (h2 >>> 11);
  };
}

/**
 * Number of distinct points among drawn unit points (the count iteratePoints
 * gives when it drops repeats), in time and memory proportional to the draws
 * and without building a point or a string per draw:
 *
 * - all ranges discrete, combinations within 2^53: sort the combination
 *   indices and count the distinct ones;
 * - otherwise one number per draw that equal points always share (the
 *   coordinate of the first continuous range, equal up to `closeness`; or a
 *   hash of the discrete indices) is sorted, and only the draws whose number
 *   meets another's are compared exactly, by their values, in a second pass.
 */
export function countDistinctDraws(count: number, draws: () => Iterable<number[]>, ranges: readonly Range[]): number {
  const keys = new Float64Array(count);
  let n = 0;
  if (hasCombinationIndex(ranges)) {
    const index = combinationIndexer(ranges);
    for (const u of draws()) keys[n++] = index(u);
    keys.sort();
    let distinct = n > 0 ? 1 : 0;
    for (let i = 1; i < n; i++) if (keys[i] !== keys[i - 1]) distinct++;
    return distinct;
  }
  const continuous = ranges.findIndex((r) => 'between' in r && !r.integer);
  const key: (u: readonly number[]) => number = continuous >= 0 ? (u) => u[continuous]! : indexHash(ranges);
  const tolerance = continuous >= 0 ? closeness(ranges[continuous] as BetweenRange) : 0;
  for (const u of draws()) keys[n++] = key(u);
  const sorted = keys.slice(0, n).sort();
  const suspects = new Set<number>();
  for (let i = 1; i < n; i++) {
    if (sorted[i]! - sorted[i - 1]! <= tolerance) {
      suspects.add(sorted[i]!);
      suspects.add(sorted[i - 1]!);
    }
  }
  return suspects.size === 0 ? n : n - repeatsAmong(suspects, keys, ranges, draws());
}

/** Second pass: draws whose key is a suspect, compared by their values; returns how many repeat an earlier one. */
function repeatsAmong(
  suspects: ReadonlySet<number>,
  keys: Float64Array,
  ranges: readonly Range[],
  draws: Iterable<number[]>,
): number {
  const seen = new Set<string>();
  let repeats = 0;
  let i = 0;
  for (const u of draws) {
    if (suspects.has(keys[i++]!)) {
      const values: Array<Point[string]> = ranges.map((range, d) => valueAt(range, u[d]!));
      const id = JSON.stringify(values);
      if (seen.has(id)) repeats++;
      else seen.add(id);
    }
  }
  return repeats;
}
