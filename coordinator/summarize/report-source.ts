import type { FailureRecord, ResultRecord } from '../../shared/schemas/records.js';
import type { LoadedSweep } from '../../shared/sweep/load.js';

/** A problem the store met while scanning shards (torn line, conflict, ...). */
export interface ScanWarning {
  readonly kind: string;
  readonly file: string;
  readonly line: number;
  readonly message: string;
}

/**
 * The part of the result store the summarizer reads. `ResultStore` has this
 * shape; keeping it narrow lets the report run on any source of records.
 */
export interface ReportSource {
  readonly dir: string;
  readonly reportDir: string;
  readSweep(): Promise<LoadedSweep & { readonly codeVersion: string; readonly createdAt: string }>;
  records(options?: { readonly onWarning?: (w: ScanWarning) => void }): AsyncGenerator<ResultRecord>;
  failures(options?: { readonly onWarning?: (w: ScanWarning) => void }): AsyncGenerator<FailureRecord>;
}
