import { gridValues, type Range } from '../../shared/sweep/ranges.js';
import { type Axis, type AxisValue, binAxis, geometricList, locate, valueAxis } from './axis.js';

/** Where a parameter point falls on a set of heat maps. */
export interface CellPlace {
  readonly x: number;
  readonly y: number;
  readonly facet: number;
}

/** The axes of heat-map diagrams and the cell of every point. */
export interface CellLayout {
  readonly xAxis: Axis | null;
  readonly yAxis: Axis | null;
  readonly facetAxis: Axis | null;
  /** True when some axis bins a continuous range (random, lhs and sobol sweeps). */
  readonly binned: boolean;
  /** The cell of a point, or null when it lies off the axes. */
  cellOf(values: Readonly<Record<string, unknown>>): CellPlace | null;
}

export interface CellLayoutInput {
  readonly vary: Readonly<Record<string, Range>>;
  readonly x: string | null;
  readonly y: string | null;
  readonly facet: string | null;
  /** Bins per axis for continuous ranges. */
  readonly bins: number;
  /** Bins for a continuous facet. */
  readonly facetBins: number;
  /** Parameters drawn on a log axis on request (ranges with `scale: log` and geometric lists are anyway). */
  readonly log?: ReadonlySet<string>;
  /** Points whose numeric values join the grid's own on value axes (an adaptive sweep's midpoints). */
  readonly occurring?: ReadonlyArray<Readonly<Record<string, unknown>>>;
}

/** Axis of one varied parameter: its values (grid and discrete ranges), or bins of a continuous range. */
function axisFor(
  vary: Readonly<Record<string, Range>>,
  param: string,
  bins: number,
  logAsked: boolean,
  occurring: ReadonlyArray<Readonly<Record<string, unknown>>> = [],
): Axis {
  const range = vary[param];
  if (range === undefined) throw new TypeError(`no range for ${param}`);
  if ('between' in range) {
    const [lo, hi] = range.between;
    const log = range.scale === 'log' || logAsked;
    return binAxis(param, lo, hi, bins, log, range.integer);
  }
  const values: AxisValue[] = 'among' in range ? [...range.among] : gridValues(range);
  const log = logAsked || ('from' in range && range.scale === 'log') || geometricList(values);
  for (const point of occurring) {
    const v = point[param];
    if (typeof v === 'number') values.push(v);
  }
  return valueAxis(param, values, log);
}

/**
 * Heat-map axes: one cell per value of a grid or discrete range, equal bins
 * (in log space for log ranges) over a continuous one. Parameters on no axis
 * are pooled: the points that share a cell are summarised together.
 */
export function buildCellLayout(input: CellLayoutInput): CellLayout {
  const asked = (p: string): boolean => input.log?.has(p) ?? false;
  const extra = input.occurring;
  const xAxis = input.x === null ? null : axisFor(input.vary, input.x, input.bins, asked(input.x), extra);
  const yAxis = input.y === null ? null : axisFor(input.vary, input.y, input.bins, asked(input.y), extra);
  const facetAxis =
    input.facet === null ? null : axisFor(input.vary, input.facet, input.facetBins, asked(input.facet), extra);
  return {
    xAxis,
    yAxis,
    facetAxis,
    binned: [xAxis, yAxis, facetAxis].some((a) => a?.kind === 'bins'),
    cellOf: (values) => {
      const x = xAxis === null ? 0 : locate(xAxis, values[xAxis.param]);
      const y = yAxis === null ? 0 : locate(yAxis, values[yAxis.param]);
      const facet = facetAxis === null ? 0 : locate(facetAxis, values[facetAxis.param]);
      return x < 0 || y < 0 || facet < 0 ? null : { x, y, facet };
    },
  };
}
