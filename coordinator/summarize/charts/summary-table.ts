import { escapeXml } from '../svg-util.js';
import { buildTable, type SummaryTable, toCsv, toMarkdown } from '../tables.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/** Rows shown inline on the page; the CSV always has all of them. */
const MAX_PAGE_ROWS = 2000;

/** The per-point table: CSV, Markdown and the page's table. */
export const summaryTable: ReportChart = {
  id: 'summary-table',
  pageRank: 20,
  render(report, want): ChartOutput {
    const table = buildTable(report.columns, report.groups, report.metricKinds);
    const files: Array<[string, string]> = [];
    if (want('csv')) files.push(['points.csv', toCsv(table)]);
    if (want('md')) files.push(['points.md', toMarkdown(table, `${report.sweep.spec.name}: per-point summary`)]);
    return { files, section: section(table, want('csv') ? 'points.csv' : null, report.dir) };
  },
};

function section(table: SummaryTable, csvFile: string | null, dir: string): string {
  const e = escapeXml;
  const parts: string[] = [];
  parts.push('<h2 id="points">Per-point table</h2>');
  const rows = table.display.rows;
  const shown = rows.slice(0, MAX_PAGE_ROWS);
  const notes: string[] = [];
  if (csvFile !== null)
    notes.push(
      `Machine-readable: <a href="${e(csvFile)}">${e(csvFile)}</a> (plain numbers, one row per parameter point; <code>success_job</code> and <code>failure_job</code> hold full job keys).`,
    );
  notes.push(
    `The last column names one trial of each outcome; <code>recallscape inspect ${e(shellWord(dir))} --job KEY</code> re-runs it and draws its recall.`,
  );
  parts.push(`<p class="note">${notes.join(' ')}</p>`);
  if (shown.length < rows.length)
    parts.push(`<p class="note">Showing the first ${shown.length} of ${rows.length} rows.</p>`);
  parts.push('<div class="table-wrap"><table class="summary"><thead><tr>');
  for (const c of table.display.columns) parts.push(`<th>${e(c)}</th>`);
  parts.push('</tr></thead><tbody>');
  for (const row of shown) parts.push(`<tr>${row.map((c) => `<td>${e(c)}</td>`).join('')}</tr>`);
  parts.push('</tbody></table></div>');
  return parts.join('\n');
}

/** A path as one shell word: quoted only when it needs to be. */
export function shellWord(text: string): string {
  return /^[A-Za-z0-9_./:@%+=-]+$/.test(text) ? text : `'${text.replace(/'/g, `'\\''`)}'`;
}
