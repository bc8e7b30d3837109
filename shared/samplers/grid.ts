import type { ProductSampler } from './sampler.js';

export const gridSampler = {
  kind: 'grid',
  help: 'Full product of the ranges',
  ranges: ['list', 'steps'],
  needsPoints: false,
  maxDimensions: Number.POSITIVE_INFINITY,
} as const satisfies ProductSampler;

/**
 * Full product of per-dimension value counts, as index tuples. The first
 * dimension changes slowest and the last fastest (like an odometer), so a
 * grid lists its points in the order the parameters appear in the file.
 */
export function gridSize(sizes: readonly number[]): number {
  return sizes.reduce((product, n) => product * n, 1);
}

/** Lazily yields every index tuple; the same array is never reused by callers. */
export function* gridIndices(sizes: readonly number[]): Generator<number[]> {
  checkSizes(sizes);
  const index = sizes.map(() => 0);
  const total = gridSize(sizes);
  for (let count = 0; count < total; count++) {
    yield index.slice();
    for (let d = sizes.length - 1; d >= 0; d--) {
      const next = (index[d] ?? 0) + 1;
      if (next < (sizes[d] ?? 1)) {
        index[d] = next;
        break;
      }
      index[d] = 0;
    }
  }
}

/** The index tuple at position `position` of gridIndices(sizes), without walking there. */
export function gridIndexAt(sizes: readonly number[], position: number): number[] {
  checkSizes(sizes);
  const index = sizes.map(() => 0);
  let rest = position;
  for (let d = sizes.length - 1; d >= 0; d--) {
    const n = sizes[d] ?? 1;
    index[d] = rest % n;
    rest = Math.floor(rest / n);
  }
  return index;
}

function checkSizes(sizes: readonly number[]): void {
  if (sizes.some((n) => !Number.isInteger(n) || n < 1)) {
    throw new RangeError(`grid sizes must be positive integers, got [${sizes.join(', ')}]`);
  }
}
