import type { Point } from '../../shared/schemas/records.js';
import { gridValues, type Range } from '../../shared/sweep/ranges.js';
import type { SamplerKind } from '../../shared/sweep/schema.js';
import { type Axis, type AxisValue, axisSize, binAxis, locate, valueAxis } from './axis.js';
import type { DimensionColumn, TableCell } from './tables.js';

/** Where a group sits: its table columns and its diagram cell. */
export interface GroupPlace {
  readonly dims: readonly TableCell[];
  readonly x: number;
  readonly y: number;
  readonly facet: number;
}

export interface ReportLayout {
  /** True for random, lhs and sobol sweeps: table rows are bins, not points. */
  readonly binned: boolean;
  readonly xAxis: Axis | null;
  readonly yAxis: Axis | null;
  readonly facetAxis: Axis | null;
  /** Leading table columns. */
  readonly dims: readonly DimensionColumn[];
  /** Group of a point (fast path, called once per record), or null if it lies off the axes. */
  keyOf(point: Point): string | null;
  place(point: Point): GroupPlace | null;
}

export interface LayoutInput {
  readonly sampler: SamplerKind;
  readonly vary: Readonly<Record<string, Range>>;
  readonly variedNames: readonly string[];
  readonly x: string | null;
  readonly y: string | null;
  readonly facet: string | null;
  readonly bins: number;
  readonly facetBins: number;
  readonly label: (param: string) => string;
}

/** Axis of one varied parameter: its values on a grid, bins for a continuous sampled range. */
function axisFor(input: LayoutInput, param: string, bins: number): Axis {
  const range = input.vary[param];
  if (range === undefined) throw new TypeError(`no range for ${param}`);
  if ('between' in range) {
    const [lo, hi] = range.between;
    return binAxis(param, lo, hi, bins, range.scale === 'log');
  }
  const values: AxisValue[] = 'among' in range ? [...range.among] : gridValues(range);
  return valueAxis(param, values);
}

/**
 * How records become rows and cells. A grid sweep keeps one row per
 * parameter point (every varied parameter), and cells pool the points that
 * share x, y and facet. A sampled sweep has (almost) no repeated points, so
 * rows are the cells themselves: bins over x and y (and the facet), and
 * every other varied parameter is pooled.
 */
export function buildLayout(input: LayoutInput): ReportLayout {
  const binned = input.sampler !== 'grid';
  const xAxis = input.x === null ? null : axisFor(input, input.x, input.bins);
  const yAxis = input.y === null ? null : axisFor(input, input.y, input.bins);
  const facetAxis = input.facet === null ? null : axisFor(input, input.facet, input.facetBins);
  const cellOf = (point: Point): { x: number; y: number; facet: number } | null => {
    const x = xAxis === null ? 0 : locate(xAxis, point[xAxis.param]);
    const y = yAxis === null ? 0 : locate(yAxis, point[yAxis.param]);
    const facet = facetAxis === null ? 0 : locate(facetAxis, point[facetAxis.param]);
    return x < 0 || y < 0 || facet < 0 ? null : { x, y, facet };
  };

  if (!binned) {
    const names = input.variedNames;
    return {
      binned,
      xAxis,
      yAxis,
      facetAxis,
      dims: names.map((n) => ({ name: n, label: input.label(n) })),
      keyOf: (point) => JSON.stringify(names.map((n) => point[n] ?? null)),
      place: (point) => {
        const cell = cellOf(point);
        return cell === null ? null : { ...cell, dims: names.map((n) => point[n] ?? null) };
      },
    };
  }

  const axes = [xAxis, yAxis, facetAxis].filter((a): a is Axis => a !== null);
  const dims: DimensionColumn[] = [];
  for (const axis of axes) {
    if (axis.kind === 'bins') {
      dims.push(
        { name: `${axis.param}_lo`, label: `${input.label(axis.param)} from` },
        { name: `${axis.param}_hi`, label: `${input.label(axis.param)} to` },
      );
    } else {
      dims.push({ name: axis.param, label: input.label(axis.param) });
    }
  }
  const dimsOf = (cell: { x: number; y: number; facet: number }): TableCell[] => {
    const out: TableCell[] = [];
    const indices = [
      xAxis === null ? null : cell.x,
      yAxis === null ? null : cell.y,
      facetAxis === null ? null : cell.facet,
    ].filter((i): i is number => i !== null);
    axes.forEach((axis, k) => {
      const i = indices[k] ?? 0;
      if (axis.kind === 'bins') out.push(axis.edges[i] ?? null, axis.edges[i + 1] ?? null);
      else out.push(axis.values[i] ?? null);
    });
    return out;
  };
  return {
    binned,
    xAxis,
    yAxis,
    facetAxis,
    dims,
    keyOf: (point) => {
      const cell = cellOf(point);
      return cell === null ? null : `${cell.facet}|${cell.y}|${cell.x}`;
    },
    place: (point) => {
      const cell = cellOf(point);
      return cell === null ? null : { ...cell, dims: dimsOf(cell) };
    },
  };
}

/** Every cell of a binned layout, in table order (facet, then y, then x), even those no point reached. */
export function allBinnedPlaces(layout: ReportLayout): Array<{ key: string } & GroupPlace> {
  const nx = layout.xAxis === null ? 1 : axisSize(layout.xAxis);
  const ny = layout.yAxis === null ? 1 : axisSize(layout.yAxis);
  const nf = layout.facetAxis === null ? 1 : axisSize(layout.facetAxis);
  const out: Array<{ key: string } & GroupPlace> = [];
  for (let facet = 0; facet < nf; facet++) {
    for (let y = 0; y < ny; y++) {
      for (let x = 0; x < nx; x++) {
        const point: Point = {};
        // A representative point inside the cell gives the same place as any record in it.
        const pick = (axis: Axis | null, i: number): void => {
          if (axis === null) return;
          if (axis.kind === 'values') point[axis.param] = axis.values[i] ?? '';
          else
            point[axis.param] = axis.log
              ? Math.sqrt((axis.edges[i] ?? 1) * (axis.edges[i + 1] ?? 1))
              : ((axis.edges[i] ?? 0) + (axis.edges[i + 1] ?? 0)) / 2;
        };
        pick(layout.xAxis, x);
        pick(layout.yAxis, y);
        pick(layout.facetAxis, facet);
        const place = layout.place(point);
        const key = layout.keyOf(point);
        if (place !== null && key !== null) out.push({ key, ...place });
      }
    }
  }
  return out;
}
