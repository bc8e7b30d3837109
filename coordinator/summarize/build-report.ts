import { ResultStore } from '../../shared/store/result-store.js';
import { buildReportFrom, type ReportOptions, type ReportResult } from './report-builder.js';

export type { ReportOptions, ReportResult } from './report-builder.js';

/**
 * Tables, phase diagrams and index.html for the sweep folder `options.dir`,
 * written into `<dir>/report/`. Works on a finished sweep and on one still
 * running (incomplete cells are marked). Throws InputError for bad options.
 */
export async function buildReport(options: ReportOptions): Promise<ReportResult> {
  return buildReportFrom(ResultStore.open(options.dir), options);
}
