import type { CollectedReport } from '../collect.js';
import { escapeXml } from '../svg-util.js';
import { csvField } from '../tables.js';
import { trialHeader, trialRow } from '../trial-recorder.js';
import type { ChartOutput, ReportChart } from './report-chart.js';

/** Lines per chunk handed to the file writer. */
const CHUNK_LINES = 2000;

/**
 * `trials.csv`: one row per trial (per result record). Columns: job key,
 * point index, replicate, seed, every parameter column, then every scalar
 * metric (success first). Arrays stay in the records. Usually written during
 * the collecting scan (TrialRecorder); otherwise streamed from a second
 * pass over the records, so memory never grows with their number.
 */
export const trialTable: ReportChart = {
  id: 'trial-table',
  pageRank: 30,
  render(report, want): ChartOutput {
    if (!want('csv')) return { files: [], section: null };
    const data = report.trialsFile === null ? trialLines(report) : { moveFrom: report.trialsFile };
    return { files: [['trials.csv', data]], section: section(report) };
  },
};

async function* trialLines(report: CollectedReport): AsyncGenerator<string> {
  const params = report.columns.map((c) => c.name);
  const varied = report.sweep.variedNames;
  const metrics = report.trialMetrics;
  const pointIndex = new Map<string, number>();
  report.groups.forEach((g, i) => {
    pointIndex.set(JSON.stringify(varied.map((p) => g.values[p] ?? null)), i);
  });
  let chunk: string[] = [`${trialHeader(params, metrics).map(csvField).join(',')}\n`];
  // Warnings were reported by the first scan; the second meets the same lines.
  for await (const record of report.source.records()) {
    const point = pointIndex.get(JSON.stringify(varied.map((p) => record.point[p] ?? null))) ?? null;
    chunk.push(trialRow(record, point, params, metrics, point === null ? record.point : report.groups[point]?.values));
    if (chunk.length >= CHUNK_LINES) {
      yield chunk.join('');
      chunk = [];
    }
  }
  if (chunk.length > 0) yield chunk.join('');
}

function section(report: CollectedReport): string {
  const e = escapeXml;
  return [
    '<h2 id="trials">Every trial</h2>',
    `<p class="note"><a href="trials.csv">trials.csv</a> has one row per trial: <code>job</code> (the job key), <code>point</code> (the row of the per-point table, from 0), <code>replicate</code>, <code>seed</code>, the parameters (${e(report.columns.map((c) => c.name).join(', ') || 'none varied')}) and every scalar metric; empty fields are missing values. It loads without options: <code>pandas.read_csv("trials.csv")</code> in Python, <code>read.csv("trials.csv")</code> in R.</p>`,
  ].join('\n');
}
