import { displayPath } from './shell-text.js';
import { buildReport, type ReportResult } from './summarize/build-report.js';

/**
 * The report a sweep ends with (`demo`, `run`, `finish`): the same files as
 * `recallscape report DIR` with the sweep's own report settings, and the
 * lines that say where they are.
 */
export async function buildClosingReport(
  dir: string,
  write: (text: string) => void,
): Promise<{ readonly report: ReportResult; readonly text: string }> {
  const report = await buildReport({ dir });
  const diagrams = report.files.filter((f) => f.endsWith('.svg')).length;
  const what =
    diagrams === 0
      ? 'tables as CSV and Markdown'
      : `${diagrams} phase diagram${diagrams === 1 ? '' : 's'} as SVG and PNG, tables as CSV and Markdown`;
  const text =
    `report: ${displayPath(report.reportDir)}/ (${what})\n` +
    (report.indexHtml === null ? '' : `open ${displayPath(report.indexHtml)} in a browser\n`);
  write(text);
  return { report, text };
}
