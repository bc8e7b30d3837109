import { closeSync, fdatasyncSync, mkdirSync, openSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { FailureRecordSchema, ResultRecordSchema, type FailureRecord, type ResultRecord } from '../schemas/records.js';
import { isWriterId } from './writer-id.js';

export interface ShardWriter {
  readonly writer: string;
  /** One write call per line: a kill never leaves half a record except a torn LAST line. */
  appendResult(record: ResultRecord): void;
  appendFailure(record: FailureRecord): void;
  /** fdatasync both shard files. */
  sync(): void;
  close(): void;
}

/** Appends whole lines to one file, opened lazily in append mode. */
class AppendFile {
  private fd: number | undefined;
  constructor(private readonly folder: string, private readonly path: string) {}

  appendLine(line: string): void {
    if (this.fd === undefined) {
      mkdirSync(this.folder, { recursive: true });
      this.fd = openSync(this.path, 'a');
    }
    const bytes = Buffer.from(line, 'utf8');
    let written = writeSync(this.fd, bytes);
    // A regular file takes the whole buffer at once; finish a short write if the OS ever gives one.
    while (written < bytes.length) written += writeSync(this.fd, bytes, written);
  }

  sync(): void {
    if (this.fd !== undefined) fdatasyncSync(this.fd);
  }

  close(): void {
    if (this.fd !== undefined) {
      closeSync(this.fd);
      this.fd = undefined;
    }
  }
}

export function createShardWriter(resultsDir: string, failuresDir: string, writer: string): ShardWriter {
  if (!isWriterId(writer)) {
    throw new RangeError(`writer id "${writer}" may contain only a-z, 0-9, ".", "_", "-" (no ".."); use newWriterId()`);
  }
  const results = new AppendFile(resultsDir, join(resultsDir, `${writer}.ndjson`));
  const failures = new AppendFile(failuresDir, join(failuresDir, `${writer}.ndjson`));
  let closed = false;
  const open = (): void => {
    if (closed) throw new Error(`shard writer ${writer} is closed`);
  };
  return {
    writer,
    appendResult(record: ResultRecord): void {
      open();
      const checked = ResultRecordSchema.safeParse(record);
      if (!checked.success) throw new TypeError(`refusing to write a malformed result record: ${checked.error.message}`);
      results.appendLine(`${JSON.stringify(checked.data)}\n`);
    },
    appendFailure(record: FailureRecord): void {
      open();
      const checked = FailureRecordSchema.safeParse(record);
      if (!checked.success) throw new TypeError(`refusing to write a malformed failure record: ${checked.error.message}`);
      failures.appendLine(`${JSON.stringify(checked.data)}\n`);
    },
    sync(): void {
      results.sync();
      failures.sync();
    },
    close(): void {
      if (closed) return;
      closed = true;
      results.close();
      failures.close();
    },
  };
}
