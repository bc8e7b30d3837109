import { type BorderEstimate, rowBorder } from '../../shared/refine/border.js';
import { Z_95 } from '../../shared/wilson.js';
import type { Axis } from './axis.js';
import type { CellGrid } from './cell-grid.js';

/**
 * The border of one panel row by row: where each row's rate crosses `level`
 * along the x axis, interpolated between the bracketing values, with the
 * interval where the rows' 95% Wilson bounds cross (shared/refine/border.ts).
 * Null for a row with fewer than two values that have trials, and for every
 * row when x is not an axis of numbers.
 */
export function rowBorders(grid: CellGrid, xAxis: Axis, level: number): Array<BorderEstimate | null> {
  const rows: Array<BorderEstimate | null> = [];
  for (let y = 0; y < grid.ny; y++) {
    if (xAxis.kind !== 'values') {
      rows.push(null);
      continue;
    }
    const points = [];
    for (const cell of grid.cells) {
      const x = xAxis.values[cell.x];
      if (cell.y !== y || typeof x !== 'number' || cell.metricCount === 0) continue;
      points.push({ x, successes: cell.hits, trials: cell.metricCount });
    }
    rows.push(points.length < 2 ? null : rowBorder(points, level, Z_95));
  }
  return rows;
}
