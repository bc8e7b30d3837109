import { describe, expect, it } from 'vitest';
import { isoLines } from '../../coordinator/summarize/contour.js';

/** success = x on an 11 x 4 grid over x in [0, 1]; cell i has x = i / 10. */
function rampField(nx: number, ny: number, missing: ReadonlySet<number> = new Set()): (number | null)[] {
  const values: (number | null)[] = [];
  for (let y = 0; y < ny; y++) {
    for (let x = 0; x < nx; x++) values.push(missing.has(y * nx + x) ? null : x / (nx - 1));
  }
  return values;
}

// Cell i's centre is at cell coordinate i + 0.5 and holds x = i / (nx - 1).
const toData = (u: number, nx: number): number => (u - 0.5) / (nx - 1);

describe('isoLines', () => {
  it('puts the 50% border of the field success = x at x = 0.5 within half a cell', () => {
    const nx = 11;
    const ny = 4;
    const lines = isoLines(rampField(nx, ny), nx, ny, 0.5);
    expect(lines.length).toBe(1);
    const points = lines[0] ?? [];
    const halfCell = 0.5 / (nx - 1); // half the spacing between x values
    for (const [u] of points) expect(Math.abs(toData(u, nx) - 0.5)).toBeLessThanOrEqual(halfCell);
    // The line spans the whole plot height (it is clipped to [0, ny] by the caller).
    const ys = points.map((p) => p[1]);
    expect(Math.min(...ys)).toBeLessThanOrEqual(0);
    expect(Math.max(...ys)).toBeGreaterThanOrEqual(ny);
  });

  it('finds a border between cell centres by linear interpolation', () => {
    // 4 cells with values 0, 0.2, 0.8, 1: the 0.5 crossing is halfway between
    // centres 1.5 and 2.5, at 2.0 (linear interpolation; worked by hand).
    const values = [0, 0.2, 0.8, 1, 0, 0.2, 0.8, 1];
    const lines = isoLines(values, 4, 2, 0.5);
    expect(lines.length).toBe(1);
    for (const [u] of lines[0] ?? []) expect(u).toBeCloseTo(2.0, 9);
  });

  it('draws no border next to cells without data', () => {
    const nx = 11;
    const ny = 4;
    // Remove the cells on both sides of the crossing in the top row.
    const missing = new Set([3 * nx + 5, 3 * nx + 4, 3 * nx + 6]);
    const lines = isoLines(rampField(nx, ny, missing), nx, ny, 0.5);
    for (const line of lines) for (const [, v] of line) expect(v).toBeLessThanOrEqual(3);
  });

  it('returns no line when the whole field is above the threshold', () => {
    expect(isoLines([0.9, 0.8, 0.7, 1], 2, 2, 0.5)).toEqual([]);
  });
});
