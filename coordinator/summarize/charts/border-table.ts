import type { Axis } from '../axis.js';
import { cellLabel, formatNumber } from '../axis.js';
import { buildCellGrids } from '../cell-grid.js';
import { rowBorders } from '../row-borders.js';
import { escapeXml } from '../svg-util.js';
import { type TableCell, toCsv } from '../tables.js';
import { borderLevel, cellLayoutOf } from './phase-diagrams.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/**
 * The border as numbers: for every row (and facet) of a grid's rate
 * diagram, where the rate crosses the border level along x, interpolated
 * between the two values that bracket it, with the interval where the rows'
 * 95% Wilson bounds cross it. Written as border.csv and shown on the page.
 */
export const borderTable: ReportChart = {
  id: 'border-table',
  pageRank: 15,
  render(report, want): ChartOutput {
    const none = { files: [], section: null };
    if (report.diagramKind !== 'cells' || report.metric.kind !== 'boolean') return none;
    const layout = cellLayoutOf(report);
    const { xAxis, yAxis, facetAxis } = layout;
    if (xAxis === null || xAxis.kind !== 'values' || !xAxis.values.every((v) => typeof v === 'number')) return none;
    const level = borderLevel(report);
    const columns: string[] = [];
    if (facetAxis !== null) columns.push(facetAxis.param);
    if (yAxis !== null) columns.push(yAxis.param);
    columns.push(
      `${xAxis.param}_border`,
      `${xAxis.param}_lo`,
      `${xAxis.param}_hi`,
      'left',
      'right',
      'points',
      'trials',
    );
    const rows: TableCell[][] = [];
    for (const grid of buildCellGrids(report.groups, layout, report.metric)) {
      rowBorders(grid, xAxis, level).forEach((border, y) => {
        const inRow = grid.cells.filter((c) => c.y === y && c.metricCount > 0);
        const row: TableCell[] = [];
        if (facetAxis !== null) row.push(axisValue(facetAxis, grid.facet));
        if (yAxis !== null) row.push(axisValue(yAxis, y));
        row.push(
          border?.x ?? null,
          border?.lo ?? null,
          border?.hi ?? null,
          border?.left ?? null,
          border?.right ?? null,
          inRow.length,
          inRow.reduce((s, c) => s + c.metricCount, 0),
        );
        rows.push(row);
      });
    }
    const files: Array<[string, string]> = [];
    if (want('csv')) files.push(['border.csv', toCsv({ columns, rows })]);
    return { files, section: section(columns, rows, level, report.metric.name, want('csv')) };
  },
};

/** The axis's value of a cell (a number or text for values, the bin's label for bins). */
function axisValue(axis: Axis, index: number): TableCell {
  if (axis.kind === 'values') {
    const v = axis.values[index];
    return typeof v === 'number' || typeof v === 'string' ? v : v === undefined ? null : String(v);
  }
  return cellLabel(axis, index);
}

function shown(cell: TableCell): string {
  if (cell === null) return '';
  return typeof cell === 'number' ? formatNumber(cell) : String(cell);
}

function section(columns: string[], rows: TableCell[][], level: number, metric: string, csv: boolean): string {
  const e = escapeXml;
  const percent = `${Math.round(level * 1000) / 10}%`;
  const parts = ['<h2 id="border">Border by row</h2>'];
  parts.push(
    `<p class="note">Where the ${e(metric)} rate of each row crosses ${percent}, interpolated between the two values that bracket it (<code>left</code>, <code>right</code>), and the interval where the rows' 95% Wilson bounds cross ${percent} (an empty end: the data do not rule out a border up to that end of the row; an empty border: the rate does not cross in this row).${csv ? ' Machine-readable: <a href="border.csv">border.csv</a>.' : ''}</p>`,
  );
  parts.push('<div class="table-wrap"><table class="summary"><thead><tr>');
  for (const c of columns) parts.push(`<th>${e(c)}</th>`);
  parts.push('</tr></thead><tbody>');
  for (const row of rows) parts.push(`<tr>${row.map((c) => `<td>${e(shown(c))}</td>`).join('')}</tr>`);
  parts.push('</tbody></table></div>');
  return parts.join('\n');
}
