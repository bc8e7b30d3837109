import { escapeXml } from '../svg-util.js';
import { buildTable, type SummaryTable, toCsv, toMarkdown } from '../tables.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/** Rows shown inline on the page; the CSV always has all of them. */
const MAX_PAGE_ROWS = 2000;

/** The per-point (grid) or per-bin (sampled) table: CSV, Markdown and the page's table. */
export const summaryTable: ReportChart = {
  id: 'summary-table',
  pageRank: 20,
  render(report, want): ChartOutput {
    const { layout, sweep } = report;
    const table = buildTable(layout.dims, report.groups, report.metricKinds);
    const unit = layout.binned ? 'bin' : 'point';
    const name = layout.binned ? 'bins' : 'points';
    const files: Array<[string, string]> = [];
    if (want('csv')) files.push([`${name}.csv`, toCsv(table)]);
    if (want('md')) files.push([`${name}.md`, toMarkdown(table, `${sweep.spec.name}: per-${unit} summary`)]);
    return { files, section: section(table, unit, want('csv') ? `${name}.csv` : null) };
  },
};

function section(table: SummaryTable, unit: string, csvFile: string | null): string {
  const e = escapeXml;
  const parts: string[] = [];
  parts.push(`<h2>Per-${unit} table</h2>`);
  const rows = table.display.rows;
  const shown = rows.slice(0, MAX_PAGE_ROWS);
  if (csvFile !== null)
    parts.push(
      `<p class="note">Machine-readable: <a href="${e(csvFile)}">${e(csvFile)}</a> (plain numbers, one row per ${unit}).</p>`,
    );
  if (shown.length < rows.length)
    parts.push(`<p class="note">Showing the first ${shown.length} of ${rows.length} rows.</p>`);
  parts.push('<div class="table-wrap"><table class="summary"><thead><tr>');
  for (const c of table.display.columns) parts.push(`<th>${e(c)}</th>`);
  parts.push('</tr></thead><tbody>');
  for (const row of shown) parts.push(`<tr>${row.map((c) => `<td>${e(c)}</td>`).join('')}</tr>`);
  parts.push('</tbody></table></div>');
  return parts.join('\n');
}
