import { binEdges, binIndex } from './binning.js';

export type AxisValue = number | string | boolean;

/** One cell per distinct value (grid sweeps, and categorical parameters). */
export interface ValueAxis {
  readonly kind: 'values';
  readonly param: string;
  readonly values: readonly AxisValue[];
  readonly positions: ReadonlyMap<string, number>;
  /** Drawn in log space: cells sized by the ratios of neighbouring values rather than their differences. */
  readonly log: boolean;
}

/** One cell per bin of a numeric range (random, lhs and sobol sweeps). */
export interface BinAxis {
  readonly kind: 'bins';
  readonly param: string;
  /** bins + 1 increasing edges. */
  readonly edges: readonly number[];
  readonly log: boolean;
}

export type Axis = ValueAxis | BinAxis;

function valueKey(value: AxisValue): string {
  return `${typeof value}:${String(value)}`;
}

/**
 * A value axis from the values that occur. Numbers are sorted so neighbouring
 * cells are neighbours in parameter space (the border contour relies on it);
 * strings and booleans keep the order they first appear in (the sweep's order).
 */
export function valueAxis(param: string, occurring: Iterable<AxisValue>, log = false): ValueAxis {
  const seen = new Map<string, AxisValue>();
  for (const v of occurring) {
    const key = valueKey(v);
    if (!seen.has(key)) seen.set(key, v);
  }
  let values = [...seen.values()];
  if (values.every((v) => typeof v === 'number')) values = (values as number[]).sort((a, b) => a - b);
  const positions = new Map(values.map((v, i) => [valueKey(v), i]));
  return { kind: 'values', param, values, positions, log };
}

/** How uneven gaps may be, largest over smallest, for a list to count as evenly spaced in log space. */
const GEOMETRIC_SPREAD = 1.5;

/**
 * Whether listed numbers are spaced more evenly by ratio than by difference,
 * as sizes usually are (6, 10, 16, 25, 40 or 1, 2, 5, 10): such a list is
 * drawn on a log axis. Whole-number rounding of a geometric series keeps the
 * spread of its log gaps well under GEOMETRIC_SPREAD.
 */
export function geometricList(values: readonly AxisValue[]): boolean {
  if (values.length < 3 || !values.every((v) => typeof v === 'number' && v > 0)) return false;
  const sorted = [...new Set(values as number[])].sort((a, b) => a - b);
  if (sorted.length < 3) return false;
  const spread = (xs: number[]): number => {
    const gaps = xs.slice(1).map((x, i) => x - (xs[i] as number));
    return Math.max(...gaps) / Math.min(...gaps);
  };
  const logSpread = spread(sorted.map(Math.log));
  return logSpread <= GEOMETRIC_SPREAD && logSpread < spread(sorted);
}

/**
 * Bins over [lo, hi]. For whole-number ranges the inner edges are rounded to
 * whole numbers (bins that would then be empty are merged away), so every
 * bin holds whole values [a, b) and the axis shows whole-number ticks.
 */
export function binAxis(param: string, lo: number, hi: number, bins: number, log: boolean, whole = false): BinAxis {
  const edges = binEdges(lo, hi, bins, log);
  if (!whole) return { kind: 'bins', param, edges, log };
  const rounded: number[] = [];
  for (const e of edges.map(Math.round))
    if (rounded.length === 0 || e > (rounded[rounded.length - 1] as number)) rounded.push(e);
  if (rounded.length < 2) rounded.push(hi);
  return { kind: 'bins', param, edges: rounded, log };
}

export function axisSize(axis: Axis): number {
  return axis.kind === 'values' ? axis.values.length : axis.edges.length - 1;
}

/** Cell index of a parameter value, or -1 when it is not on the axis. */
export function locate(axis: Axis, value: unknown): number {
  if (axis.kind === 'values') {
    if (typeof value !== 'number' && typeof value !== 'string' && typeof value !== 'boolean') return -1;
    return axis.positions.get(valueKey(value)) ?? -1;
  }
  return typeof value === 'number' ? binIndex(axis.edges, axis.log, value) : -1;
}

/** Compact number formatting for labels and tables read by people. */
export function formatNumber(value: number): string {
  if (Number.isInteger(value)) return String(value);
  const abs = Math.abs(value);
  if (abs !== 0 && (abs < 1e-3 || abs >= 1e6)) return value.toExponential(2);
  return String(Number(value.toPrecision(4)));
}

export function formatValue(value: AxisValue): string {
  return typeof value === 'number' ? formatNumber(value) : String(value);
}

/** Label of one cell: the value, or the bin as a half-open interval. */
export function cellLabel(axis: Axis, index: number): string {
  if (axis.kind === 'values') {
    const v = axis.values[index];
    return v === undefined ? '' : formatValue(v);
  }
  const lo = axis.edges[index];
  const hi = axis.edges[index + 1];
  if (lo === undefined || hi === undefined) return '';
  const last = index === axis.edges.length - 2;
  return `[${formatNumber(lo)}, ${formatNumber(hi)}${last ? ']' : ')'}`;
}
