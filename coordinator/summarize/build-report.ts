import { mkdir, rename, rm } from 'node:fs/promises';
import { join } from 'node:path';
import { writeFileAtomic } from '../../shared/atomic-write.js';
import { ResultStore } from '../../shared/store/result-store.js';
import { REPORT_CHARTS } from './charts/registry.js';
import type { ChartFileData, ReportChart } from './charts/report-chart.js';
import { type CollectedReport, collectReport, type ReportOptions } from './collect.js';
import { renderReportPage } from './report-page.js';
import type { ReportFormat } from './report-settings.js';
import type { ReportSource, ScanWarning } from './report-source.js';
import { describeSweep, sweepMarkdown } from './sweep-description.js';

export type { ReportOptions } from './collect.js';

export interface ReportResult {
  readonly reportDir: string;
  readonly indexHtml: string | null;
  readonly files: readonly string[];
  readonly completedJobs: number;
  readonly plannedJobs: number;
  /** Jobs with a failed attempt and no result. */
  readonly failedJobs: number;
  /** Torn lines, conflicts and other problems met while reading the shards (the first few hundred). */
  readonly warnings: readonly ScanWarning[];
  /** How many warnings there were in all; may exceed `warnings.length`. */
  readonly warningCount: number;
  /** Diagram cells with some but fewer trials than planned, over all panels. */
  readonly incompleteCells: number;
  /** Diagram cells with planned trials and none done yet. */
  readonly emptyCells: number;
}

/**
 * Tables, phase diagrams and index.html for the sweep folder `options.dir`,
 * written into `<dir>/report/`. Works on a finished sweep and on one still
 * running (incomplete cells are marked). Throws InputError for bad options.
 */
export async function buildReport(options: ReportOptions): Promise<ReportResult> {
  return buildReportFrom(ResultStore.open(options.dir), options);
}

/**
 * The report pipeline: collect (stream the records once into groups), render
 * every registered chart in memory, lay out the page, and only then write,
 * each file atomically, so bad input or a failure midway leaves the previous
 * report untouched.
 */
export async function buildReportFrom(
  source: ReportSource,
  options: ReportOptions,
  charts: readonly ReportChart[] = REPORT_CHARTS,
): Promise<ReportResult> {
  const report = await collectReport(source, options);
  try {
    return await renderAndWrite(report, source, charts);
  } finally {
    // A trials.csv written during the scan and not moved into place (not asked for, or a failure) goes.
    if (report.trialsFile !== null) await rm(report.trialsFile, { force: true });
  }
}

async function renderAndWrite(
  report: CollectedReport,
  source: ReportSource,
  charts: readonly ReportChart[],
): Promise<ReportResult> {
  const want = (f: ReportFormat): boolean => report.settings.formats.has(f);
  const outputs = new Map<string, ChartFileData>();
  const sections: Array<{ rank: number; html: string }> = [];
  let incompleteCells = 0;
  let emptyCells = 0;
  for (const chart of charts) {
    const out = await chart.render(report, want);
    for (const [name, data] of out.files) outputs.set(name, data);
    if (out.section !== null) sections.push({ rank: chart.pageRank, html: out.section });
    incompleteCells += out.incompleteCells ?? 0;
    emptyCells += out.emptyCells ?? 0;
  }

  const reportDir = source.reportDir;
  const generatedAt = new Date().toISOString();
  const description = describeSweep(report, generatedAt);
  // The page links to sweep.md, so it is written whenever the page is.
  if (want('md') || want('html')) outputs.set('sweep.md', sweepMarkdown(report.sweep.spec.name, description));
  let indexHtml: string | null = null;
  if (want('html')) {
    sections.sort((a, b) => a.rank - b.rank);
    const html = renderReportPage({ report, generatedAt, description, sections: sections.map((s) => s.html) });
    outputs.set('index.html', html);
    indexHtml = join(reportDir, 'index.html');
  }

  const files: string[] = [];
  for (const [name, data] of outputs) {
    const path = join(reportDir, name);
    if (typeof data === 'object' && 'moveFrom' in data) {
      await mkdir(reportDir, { recursive: true });
      await rename(data.moveFrom, path);
    } else await writeFileAtomic(path, data);
    files.push(path);
  }
  return {
    reportDir,
    indexHtml,
    files,
    completedJobs: report.completedJobs,
    plannedJobs: report.plannedJobs,
    failedJobs: report.failedJobs,
    warnings: report.warnings,
    warningCount: report.warningCount,
    incompleteCells,
    emptyCells,
  };
}
