import { wilsonInterval } from '../../shared/wilson.js';
import { axisSize } from './axis.js';
import { GroupSummary, type MetricKind } from './group-summary.js';
import type { ReportGroup } from './report-group.js';
import type { CellLayout } from './report-layout.js';

/** What a diagram cell shows, for one metric. */
export interface CellData {
  readonly x: number;
  readonly y: number;
  /** Trials done and planned. */
  readonly n: number;
  readonly planned: number;
  readonly successes: number;
  /** Trials that reported the shown metric (for boolean metrics, its "successes" are `hits`). */
  readonly metricCount: number;
  readonly hits: number;
  /** Shown value: a rate for boolean metrics, a mean for numeric ones; null without data. */
  readonly value: number | null;
  /** 95% Wilson interval for rates, null for numeric metrics. */
  readonly lo: number | null;
  readonly hi: number | null;
  readonly sd: number | null;
  /** Job keys of one successful and one unsuccessful trial in the cell, for `inspect`. */
  readonly successKey: string | null;
  readonly failureKey: string | null;
}

export interface CellGrid {
  readonly facet: number;
  readonly nx: number;
  readonly ny: number;
  /** Row-major, y outer: cells[y * nx + x]. */
  readonly cells: readonly CellData[];
}

/** The shown metric's kind; `success` is a boolean metric kept apart from the others. */
export type ShownMetric = { readonly name: string; readonly kind: MetricKind };

export function cellValue(summary: GroupSummary, planned: number, x: number, y: number, metric: ShownMetric): CellData {
  let metricCount: number;
  let hits: number;
  let value: number | null;
  let lo: number | null = null;
  let hi: number | null = null;
  let sd: number | null = null;
  if (metric.name === 'success') {
    metricCount = summary.n;
    hits = summary.successes;
  } else {
    const stats = summary.metrics.get(metric.name);
    metricCount = stats?.count ?? 0;
    // A boolean metric's mean times its count is its number of true values.
    hits = stats === undefined ? 0 : Math.round(stats.mean * stats.count);
    sd = stats?.sd() ?? null;
  }
  if (metric.kind === 'boolean') {
    value = metricCount === 0 ? null : hits / metricCount;
    const interval = wilsonInterval(hits, metricCount);
    lo = interval?.lo ?? null;
    hi = interval?.hi ?? null;
  } else {
    value = summary.metrics.get(metric.name)?.meanOrNull() ?? null;
  }
  return {
    x,
    y,
    n: summary.n,
    planned,
    successes: summary.successes,
    metricCount,
    hits,
    value,
    lo,
    hi,
    sd,
    successKey: summary.successKey,
    failureKey: summary.failureKey,
  };
}

/**
 * Pool the groups that fall into the same diagram cell (parameters that are
 * neither x, y nor facet are pooled) and lay them out as one grid per facet.
 * Cells no group reaches get n = 0 and planned = 0.
 */
export function buildCellGrids(
  groups: Iterable<Pick<ReportGroup, 'values' | 'planned' | 'summary'>>,
  layout: CellLayout,
  metric: ShownMetric,
): CellGrid[] {
  const nx = layout.xAxis === null ? 1 : axisSize(layout.xAxis);
  const ny = layout.yAxis === null ? 1 : axisSize(layout.yAxis);
  const facets = layout.facetAxis === null ? 1 : axisSize(layout.facetAxis);
  const pooled: GroupSummary[] = [];
  const planned: number[] = new Array<number>(nx * ny * facets).fill(0);
  for (let i = 0; i < nx * ny * facets; i++) pooled.push(new GroupSummary());
  for (const g of groups) {
    const cell = layout.cellOf(g.values);
    if (cell === null) continue;
    const i = (cell.facet * ny + cell.y) * nx + cell.x;
    pooled[i]?.merge(g.summary);
    planned[i] = (planned[i] ?? 0) + g.planned;
  }
  const grids: CellGrid[] = [];
  for (let f = 0; f < facets; f++) {
    const cells: CellData[] = [];
    for (let y = 0; y < ny; y++) {
      for (let x = 0; x < nx; x++) {
        const i = (f * ny + y) * nx + x;
        cells.push(cellValue(pooled[i] ?? new GroupSummary(), planned[i] ?? 0, x, y, metric));
      }
    }
    grids.push({ facet: f, nx, ny, cells });
  }
  return grids;
}
