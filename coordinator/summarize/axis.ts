import { binEdges, binIndex } from './binning.js';

export type AxisValue = number | string | boolean;

/** One cell per distinct value (grid sweeps, and categorical parameters). */
export interface ValueAxis {
  readonly kind: 'values';
  readonly param: string;
  readonly values: readonly AxisValue[];
  readonly positions: ReadonlyMap<string, number>;
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
export function valueAxis(param: string, occurring: Iterable<AxisValue>): ValueAxis {
  const seen = new Map<string, AxisValue>();
  for (const v of occurring) {
    const key = valueKey(v);
    if (!seen.has(key)) seen.set(key, v);
  }
  let values = [...seen.values()];
  if (values.every((v) => typeof v === 'number')) values = (values as number[]).sort((a, b) => a - b);
  const positions = new Map(values.map((v, i) => [valueKey(v), i]));
  return { kind: 'values', param, values, positions };
}

export function binAxis(param: string, lo: number, hi: number, bins: number, log: boolean): BinAxis {
  return { kind: 'bins', param, edges: binEdges(lo, hi, bins, log), log };
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
