import { randomBytes } from 'node:crypto';
import { closeSync, openSync, rmSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import type { ResultRecord } from '../../shared/schemas/records.js';
import { csvField, type TableCell } from './tables.js';

/** Lines buffered before one write. */
const CHUNK_LINES = 2000;

/** The columns of trials.csv: key, point index, replicate, seed, parameters, success, other metrics. */
export function trialHeader(params: readonly string[], metrics: readonly string[]): string[] {
  return ['job', 'point', 'replicate', 'seed', ...params, 'success', ...metrics];
}

/** One row of trials.csv. */
export function trialRow(
  record: ResultRecord,
  point: number | null,
  params: readonly string[],
  metrics: readonly string[],
  values: Readonly<Record<string, number | string | boolean>> = record.point,
): string {
  const cells: TableCell[] = [record.key, point, record.replicate, record.seed];
  for (const p of params) cells.push(values[p] ?? null);
  cells.push(record.metrics.success);
  for (const m of metrics) {
    const v = record.metrics[m];
    cells.push(typeof v === 'number' || typeof v === 'boolean' ? v : null);
  }
  return `${cells.map(csvField).join(',')}\n`;
}

/**
 * Writes trials.csv while the records are summarised, so a report reads its
 * records once. The metric columns must be known before the first row: the
 * model's declared scalar metrics. A record with a scalar metric outside
 * them makes the file unusable (`complete` false), and the caller writes the
 * table from a second pass instead. Rows go to a hidden temporary file in
 * the sweep folder, in chunks, so memory stays flat.
 */
export class TrialRecorder {
  readonly path: string;
  private fd: number | null;
  private chunk: string[] = [];
  private undeclared = false;

  constructor(
    folder: string,
    private readonly params: readonly string[],
    readonly metrics: readonly string[],
  ) {
    this.path = join(folder, `.trials.csv.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
    this.fd = openSync(this.path, 'w');
    this.chunk.push(`${trialHeader(params, metrics).map(csvField).join(',')}\n`);
  }

  /** `values`: the trial's parameter values, computed ones included. */
  add(record: ResultRecord, point: number | null, values: Readonly<Record<string, number | string | boolean>>): void {
    if (this.fd === null || this.undeclared) return;
    for (const name in record.metrics) {
      const v = record.metrics[name];
      if (name !== 'success' && (typeof v === 'number' || typeof v === 'boolean') && !this.metrics.includes(name)) {
        this.undeclared = true;
        return;
      }
    }
    this.chunk.push(trialRow(record, point, this.params, this.metrics, values));
    if (this.chunk.length >= CHUNK_LINES) this.flush();
  }

  private flush(): void {
    if (this.fd !== null && this.chunk.length > 0) writeSync(this.fd, this.chunk.join(''));
    this.chunk = [];
  }

  /** Close the file; true when it holds every record's row. */
  finish(): boolean {
    if (this.fd === null) return false;
    if (!this.undeclared) this.flush();
    closeSync(this.fd);
    this.fd = null;
    if (this.undeclared) this.discard();
    return !this.undeclared;
  }

  /** Remove the file (on failure, or when it was not used). */
  discard(): void {
    if (this.fd !== null) {
      closeSync(this.fd);
      this.fd = null;
    }
    rmSync(this.path, { force: true });
  }
}
