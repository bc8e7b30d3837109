import type { CollectedReport } from '../collect.js';
import type { ReportFormat } from '../report-settings.js';

/** A file's content: in memory, streamed, or already written to a temporary file. */
export type ChartFileData = string | Uint8Array | AsyncIterable<string> | { readonly moveFrom: string };

/** What one chart adds to a report. */
export interface ChartOutput {
  /**
   * Files for the report folder, by name relative to it, in the order they
   * are listed. An async iterable is streamed to disk; `moveFrom` names a
   * finished temporary file on the same disk to rename into place.
   */
  readonly files: ReadonlyArray<readonly [name: string, data: ChartFileData]>;
  /** Its part of index.html (headings included), or null for none. */
  readonly section: string | null;
  /** Diagram cells with some but fewer trials than planned (for the command's summary line). */
  readonly incompleteCells?: number;
  /** Diagram cells with planned trials and none done yet. */
  readonly emptyCells?: number;
}

/**
 * One kind of chart or table. A chart reads the collected report and renders
 * in memory; the pipeline writes its files and places its page section, so a
 * new chart is one file implementing this and one line in `registry.ts`.
 */
export interface ReportChart {
  readonly id: string;
  /** Where its section goes on the page: lower first (files are listed in registry order). */
  readonly pageRank: number;
  render(report: CollectedReport, want: (format: ReportFormat) => boolean): ChartOutput | Promise<ChartOutput>;
}
