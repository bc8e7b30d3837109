import type { Axis } from './axis.js';

/**
 * Where the cells of one heat-map axis sit, in pixels from the plot's start.
 * Bins are equal in their own (linear or log) space, so they get equal
 * widths. Numbers of a grid get widths proportional to their spacing: a cell
 * reaches halfway to each neighbour (the outer cells as far out as in), in
 * log space for a log axis. Evenly spaced values therefore get equal cells,
 * and a grid refined around a border, or values such as 1, 2, 5, 10, are drawn
 * where they lie instead of one cell apart.
 */
export interface AxisGeometry {
  /** cells + 1 increasing pixel positions of the cell edges, from 0 to the length. */
  readonly edges: readonly number[];
  /** Pixel position of each cell's value: its number on a grid axis, the middle of a bin. */
  readonly centres: readonly number[];
  /** True when the cells are equal (then drawing matches the plain one-cell-per-value layout exactly). */
  readonly even: boolean;
  /**
   * A position in cell units (0 .. cells, cell i spanning [i, i+1], its value
   * at i + 0.5) in pixels: linear between neighbouring values, so lines the
   * contour finds between cell centres land between the values themselves.
   */
  at(u: number): number;
}

/** Largest relative unevenness of gaps still drawn as equal cells: rounding of printed steps, not spacing. */
const EVEN_TOLERANCE = 1e-6;

/** The positions of a grid axis's values in the space it is drawn in, or null when they are not all numbers. */
function valuePositions(axis: Axis): number[] | null {
  if (axis.kind !== 'values') return null;
  const out: number[] = [];
  for (const v of axis.values) {
    if (typeof v !== 'number') return null;
    out.push(axis.log ? Math.log(v) : v);
  }
  return out;
}

function evenGeometry(cells: number, length: number): AxisGeometry {
  const width = length / cells;
  const edges = Array.from({ length: cells + 1 }, (_, i) => i * width);
  const centres = Array.from({ length: cells }, (_, i) => (i + 0.5) * width);
  return { edges, centres, even: true, at: (u) => u * width };
}

export function axisGeometry(axis: Axis, length: number): AxisGeometry {
  const cells = axis.kind === 'values' ? axis.values.length : axis.edges.length - 1;
  const positions = valuePositions(axis);
  if (positions === null || positions.length < 3) return evenGeometry(cells, length);
  const gaps = positions.slice(1).map((p, i) => p - (positions[i] as number));
  const least = Math.min(...gaps);
  const most = Math.max(...gaps);
  if (!(least > 0) || (most - least) / most <= EVEN_TOLERANCE) return evenGeometry(cells, length);

  const first = positions[0] as number;
  const last = positions[positions.length - 1] as number;
  const start = first - (gaps[0] as number) / 2;
  const end = last + (gaps[gaps.length - 1] as number) / 2;
  const toPixel = (p: number): number => ((p - start) / (end - start)) * length;
  const edges = [0];
  for (let i = 1; i < positions.length; i++)
    edges.push(toPixel(((positions[i - 1] as number) + (positions[i] as number)) / 2));
  edges.push(length);
  const centres = positions.map(toPixel);
  // Knots: u = 0 at the first edge, u = i + 0.5 at value i, u = cells at the last edge.
  const knotU = [0, ...centres.map((_, i) => i + 0.5), cells];
  const knotP = [0, ...centres, length];
  const at = (u: number): number => {
    if (u <= 0) return (u / 0.5) * ((knotP[1] as number) - 0) + 0;
    if (u >= cells) return length + (u - cells) * (length - (knotP[knotP.length - 2] as number)) * 2;
    let k = Math.min(knotU.length - 2, Math.floor(u + 0.5));
    while (k > 0 && (knotU[k] as number) > u) k--;
    const u0 = knotU[k] as number;
    const u1 = knotU[k + 1] as number;
    const p0 = knotP[k] as number;
    const p1 = knotP[k + 1] as number;
    return p0 + ((u - u0) / (u1 - u0)) * (p1 - p0);
  };
  return { edges, centres, even: false, at };
}

/**
 * Pixel position of a number on a grid axis of numbers: linear between the
 * centres of the values around it (in log space on a log axis), so an
 * interpolated crossing lands where it lies between the two values. Null for
 * an axis that is not all numbers, or a value outside its values.
 */
export function valuePixel(axis: Axis, geometry: AxisGeometry, value: number): number | null {
  if (axis.kind !== 'values' || !axis.values.every((v) => typeof v === 'number')) return null;
  const values = axis.values as readonly number[];
  const t = (v: number): number => (axis.log ? Math.log(v) : v);
  for (let i = 0; i < values.length; i++) {
    const a = values[i] as number;
    if (value === a) return geometry.centres[i] ?? null;
    const b = values[i + 1];
    if (b !== undefined && value > a && value < b) {
      const ca = geometry.centres[i] as number;
      const cb = geometry.centres[i + 1] as number;
      return ca + ((t(value) - t(a)) / (t(b) - t(a))) * (cb - ca);
    }
  }
  return null;
}

/**
 * Cell edges of one row when each cell reaches halfway (by pixel, i.e. by
 * value or by ratio as the axis is drawn) to the nearest cell present in the
 * same row, the outer ones to the ends of the plot: a refined row gets narrow
 * cells, a row that was not refined keeps wide ones. `present` lists the
 * row's cell indices in increasing order; the result gives [start, end] per index.
 */
export function rowCellSpans(geometry: AxisGeometry, present: readonly number[]): Map<number, [number, number]> {
  const spans = new Map<number, [number, number]>();
  const end = geometry.edges[geometry.edges.length - 1] ?? 0;
  present.forEach((index, k) => {
    const previous = present[k - 1];
    const next = present[k + 1];
    const centre = geometry.centres[index] as number;
    const start = previous === undefined ? 0 : (centre + (geometry.centres[previous] as number)) / 2;
    const stop = next === undefined ? end : (centre + (geometry.centres[next] as number)) / 2;
    spans.set(index, [start, stop]);
  });
  return spans;
}
