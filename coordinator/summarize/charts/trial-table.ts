import type { ResultRecord } from '../../../shared/schemas/records.js';
import type { CollectedReport } from '../collect.js';
import { escapeXml } from '../svg-util.js';
import { csvField, type TableCell } from '../tables.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/** Lines per chunk handed to the file writer. */
const CHUNK_LINES = 2000;

/**
 * `trials.csv`: one row per trial (per result record), streamed from the
 * records a second time so memory does not grow with their number. Columns:
 * job key, point index, replicate, seed, every parameter column, then every
 * scalar metric (success first). Arrays stay in the records.
 */
export const trialTable: ReportChart = {
  id: 'trial-table',
  pageRank: 30,
  render(report, want): ChartOutput {
    if (!want('csv')) return { files: [], section: null };
    return { files: [['trials.csv', trialLines(report)]], section: section(report) };
  },
};

/** Header of trials.csv for this report. */
export function trialColumns(report: CollectedReport): string[] {
  return [
    'job',
    'point',
    'replicate',
    'seed',
    ...report.columns.map((c) => c.name),
    'success',
    ...[...report.metricKinds.keys()].sort(),
  ];
}

async function* trialLines(report: CollectedReport): AsyncGenerator<string> {
  const params = report.columns.map((c) => c.name);
  const metrics = [...report.metricKinds.keys()].sort();
  const pointIndex = new Map<string, number>();
  report.groups.forEach((g, i) => {
    pointIndex.set(JSON.stringify(params.map((p) => g.values[p] ?? null)), i);
  });
  let chunk: string[] = [`${trialColumns(report).map(csvField).join(',')}\n`];
  // Warnings were reported by the first scan; the second meets the same lines.
  for await (const record of report.source.records()) {
    chunk.push(`${row(record, params, metrics, pointIndex).map(csvField).join(',')}\n`);
    if (chunk.length >= CHUNK_LINES) {
      yield chunk.join('');
      chunk = [];
    }
  }
  if (chunk.length > 0) yield chunk.join('');
}

function row(
  record: ResultRecord,
  params: readonly string[],
  metrics: readonly string[],
  pointIndex: ReadonlyMap<string, number>,
): TableCell[] {
  const cells: TableCell[] = [
    record.key,
    pointIndex.get(JSON.stringify(params.map((p) => record.point[p] ?? null))) ?? null,
    record.replicate,
    record.seed,
  ];
  for (const p of params) cells.push(record.point[p] ?? null);
  cells.push(record.metrics.success);
  for (const m of metrics) {
    const v = record.metrics[m];
    cells.push(typeof v === 'number' || typeof v === 'boolean' ? v : null);
  }
  return cells;
}

function section(report: CollectedReport): string {
  const e = escapeXml;
  return [
    '<h2 id="trials">Every trial</h2>',
    `<p class="note"><a href="trials.csv">trials.csv</a> has one row per trial: <code>job</code> (the job key), <code>point</code> (the row of the per-point table, from 0), <code>replicate</code>, <code>seed</code>, the parameters (${e(report.columns.map((c) => c.name).join(', ') || 'none varied')}) and every scalar metric; empty fields are missing values. It loads without options: <code>pandas.read_csv("trials.csv")</code> in Python, <code>read.csv("trials.csv")</code> in R.</p>`,
  ].join('\n');
}
