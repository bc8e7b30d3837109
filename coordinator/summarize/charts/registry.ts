import { borderTable } from './border-table.js';
import { phaseDiagrams } from './phase-diagrams.js';
import type { ReportChart } from './report-chart.js';
import { scatterDiagrams } from './scatter-diagrams.js';
import { summaryTable } from './summary-table.js';
import { trialTable } from './trial-table.js';

/**
 * Every chart and table a report holds, in the order their files are
 * written and listed. Add a chart here and nowhere else; `pageRank` places
 * its section on the page.
 */
export const REPORT_CHARTS: readonly ReportChart[] = [
  summaryTable,
  trialTable,
  phaseDiagrams,
  borderTable,
  scatterDiagrams,
];
