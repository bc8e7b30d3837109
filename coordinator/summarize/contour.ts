import { contours } from 'd3-contour';

/** A point in cell coordinates: cell i spans [i, i + 1], its centre is i + 0.5. */
export type CellPoint = readonly [number, number];

/**
 * The iso-line where a field on the cell grid crosses `threshold`, as
 * polylines in cell coordinates (x in [0, nx], y in [0, ny], y = 0 at the
 * first row).
 *
 * d3-contour runs marching squares on the cell centres with linear
 * interpolation between neighbouring centres. Two adjustments turn its
 * filled polygons into a border line:
 * - the grid is padded by one cell on every side with a copy of the edge
 *   values, so the line runs straight out to the edge of the plot instead of
 *   bending to d3's implicit "below threshold" outside, and the polygon edges
 *   that run around the padded frame are dropped;
 * - segments in a square with an empty cell (null) at a corner are dropped:
 *   where there is no data there is no border to draw.
 * The caller clips to [0, nx] x [0, ny]; inside that the line is exact.
 */
export function isoLines(values: readonly (number | null)[], nx: number, ny: number, threshold: number): CellPoint[][] {
  if (values.length !== nx * ny) throw new RangeError(`isoLines: ${values.length} values for a ${nx} x ${ny} grid`);
  if (nx === 0 || ny === 0) return [];
  const px = nx + 2;
  const py = ny + 2;
  const padded = padGrid(values, nx, ny);
  const missing = (i: number, j: number): boolean => {
    if (i < 0 || j < 0 || i >= px || j >= py) return false;
    return Number.isNaN(padded[j * px + i]);
  };
  const field = Array.from(padded);
  const shape = contours().size([px, py]).contour(field, threshold);
  // The same rings without interpolation (smoothing only moves points): their
  // segment midpoints tell unambiguously which marching square made them.
  const raw = contours().size([px, py]).smooth(false).contour(field, threshold);
  const onFrame = (p: readonly number[]): boolean => {
    const [x = 0, y = 0] = p;
    const eps = 1e-9;
    return Math.abs(x) < eps || Math.abs(y) < eps || Math.abs(x - px) < eps || Math.abs(y - py) < eps;
  };
  const lines: CellPoint[][] = [];
  shape.coordinates.forEach((polygon, pi) => {
    polygon.forEach((ring, ri) => {
      const rawRing = raw.coordinates[pi]?.[ri] ?? [];
      let current: CellPoint[] = [];
      const flush = (): void => {
        if (current.length >= 2) lines.push(current);
        current = [];
      };
      for (let k = 0; k + 1 < ring.length; k++) {
        const a = ring[k];
        const b = ring[k + 1];
        const ra = rawRing[k];
        const rb = rawRing[k + 1];
        if (a === undefined || b === undefined || ra === undefined || rb === undefined) continue;
        let keep = !onFrame(ra) && !onFrame(rb);
        if (keep) {
          // The marching square this segment lies in: corners are cell centres.
          const si = Math.floor(((ra[0] ?? 0) + (rb[0] ?? 0)) / 2 - 0.5);
          const sj = Math.floor(((ra[1] ?? 0) + (rb[1] ?? 0)) / 2 - 0.5);
          keep = !(missing(si, sj) || missing(si + 1, sj) || missing(si, sj + 1) || missing(si + 1, sj + 1));
        }
        if (!keep) {
          flush();
          continue;
        }
        const pa: CellPoint = [(a[0] ?? 0) - 1, (a[1] ?? 0) - 1];
        const pb: CellPoint = [(b[0] ?? 0) - 1, (b[1] ?? 0) - 1];
        if (current.length === 0) current.push(pa);
        current.push(pb);
      }
      flush();
    });
  });
  return mergeLines(lines);
}

/** Join polylines whose ends meet (a ring split at its start point). */
function mergeLines(lines: CellPoint[][]): CellPoint[][] {
  const same = (p: CellPoint | undefined, q: CellPoint | undefined): boolean =>
    p !== undefined && q !== undefined && Math.abs(p[0] - q[0]) < 1e-9 && Math.abs(p[1] - q[1]) < 1e-9;
  const out = lines.map((l) => [...l]);
  let merged = true;
  while (merged) {
    merged = false;
    for (let i = 0; i < out.length && !merged; i++) {
      for (let j = 0; j < out.length && !merged; j++) {
        const a = out[i];
        const b = out[j];
        if (i === j || a === undefined || b === undefined) continue;
        if (same(a[a.length - 1], b[0])) {
          out[i] = [...a, ...b.slice(1)];
          out.splice(j, 1);
          merged = true;
        }
      }
    }
  }
  return out;
}

/** The grid with one more cell on every side holding a copy of the nearest edge cell; null becomes NaN. */
function padGrid(values: readonly (number | null)[], nx: number, ny: number): Float64Array {
  const px = nx + 2;
  const py = ny + 2;
  const padded = new Float64Array(px * py);
  for (let j = 0; j < py; j++) {
    const sy = Math.min(ny - 1, Math.max(0, j - 1));
    for (let i = 0; i < px; i++) {
      const sx = Math.min(nx - 1, Math.max(0, i - 1));
      const v = values[sy * nx + sx];
      padded[j * px + i] = v === null || v === undefined ? Number.NaN : v;
    }
  }
  return padded;
}

/**
 * The region where a field on the cell grid is at least `threshold`, as
 * closed rings in cell coordinates (draw with the even-odd rule: holes are
 * rings inside rings). Same marching squares and edge padding as `isoLines`,
 * so the region's edge is exactly the iso-line; empty cells (null) count as
 * outside. Rings run out past the plot edge onto the padded frame: the caller
 * clips to [0, nx] x [0, ny].
 */
export function isoRegion(
  values: readonly (number | null)[],
  nx: number,
  ny: number,
  threshold: number,
): CellPoint[][] {
  if (values.length !== nx * ny) throw new RangeError(`isoRegion: ${values.length} values for a ${nx} x ${ny} grid`);
  if (nx === 0 || ny === 0) return [];
  const field = Array.from(padGrid(values, nx, ny));
  const shape = contours()
    .size([nx + 2, ny + 2])
    .contour(field, threshold);
  const rings: CellPoint[][] = [];
  for (const polygon of shape.coordinates) {
    for (const ring of polygon) rings.push(ring.map((p): CellPoint => [(p[0] ?? 0) - 1, (p[1] ?? 0) - 1]));
  }
  return rings;
}
