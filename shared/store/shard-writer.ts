import * as nodeFs from 'node:fs';
import { join } from 'node:path';
import { type FailureRecord, FailureRecordSchema, type ResultRecord, ResultRecordSchema } from '../schemas/records.js';
import { isWriterId } from './writer-id.js';

export interface ShardWriter {
  readonly writer: string;
  /**
   * One write call per line: a kill never leaves half a record except a torn
   * LAST line. Throws ShardWriteError if the write fails, and for every call
   * after a failed write (nothing is ever appended after a torn line).
   */
  appendResult(record: ResultRecord): void;
  appendFailure(record: FailureRecord): void;
  /** fdatasync both shard files. */
  sync(): void;
  close(): void;
}

/** The file calls a shard writer makes; replaceable so tests can inject a failing disk. */
export interface ShardFs {
  mkdirSync(path: string, options: { recursive: true }): unknown;
  openSync(path: string, flags: 'a'): number;
  writeSync(fd: number, buffer: Uint8Array, offset?: number): number;
  fdatasyncSync(fd: number): void;
  closeSync(fd: number): void;
}

const NODE_FS: ShardFs = {
  mkdirSync: (path, options) => nodeFs.mkdirSync(path, options),
  openSync: (path, flags) => nodeFs.openSync(path, flags),
  writeSync: (fd, buffer, offset) => nodeFs.writeSync(fd, buffer, offset),
  fdatasyncSync: (fd) => nodeFs.fdatasyncSync(fd),
  closeSync: (fd) => nodeFs.closeSync(fd),
};

/**
 * A shard file could not be written (disk full, file too large, I/O error).
 * The writer is then poisoned: a failed write may have left part of a line,
 * and anything appended after it would be glued onto that torn line.
 */
export class ShardWriteError extends Error {
  override readonly name = 'ShardWriteError';
  readonly file: string;
  constructor(message: string, file: string, options?: { cause?: unknown }) {
    super(message, options);
    this.file = file;
  }
}

function describeCause(error: unknown): string {
  const code = (error as NodeJS.ErrnoException | null)?.code;
  const message = error instanceof Error ? error.message : String(error);
  // One line: the CLI prints the message as is.
  const text = (code !== undefined && !message.startsWith(code) ? `${code}: ${message}` : message).replace(
    /\s*\n\s*/g,
    ' ',
  );
  return text;
}

/** Shared by both files of one writer: the first failure stops every later append. */
interface Poison {
  error: ShardWriteError | undefined;
}

/** Appends whole lines to one file, opened lazily in append mode. */
class AppendFile {
  private fd: number | undefined;
  constructor(
    private readonly folder: string,
    private readonly path: string,
    private readonly fs: ShardFs,
    private readonly poison: Poison,
  ) {}

  appendLine(line: string): void {
    const earlier = this.poison.error;
    if (earlier !== undefined) {
      throw new ShardWriteError(
        `refusing to append to ${this.path}: an earlier write to ${earlier.file} failed (${describeCause(earlier.cause)}), so this writer writes nothing more`,
        this.path,
        { cause: earlier.cause },
      );
    }
    try {
      if (this.fd === undefined) {
        this.fs.mkdirSync(this.folder, { recursive: true });
        this.fd = this.fs.openSync(this.path, 'a');
      }
      const bytes = Buffer.from(line, 'utf8');
      let written = this.fs.writeSync(this.fd, bytes);
      // A regular file takes the whole buffer at once; finish a short write if the OS ever gives one.
      while (written < bytes.length) written += this.fs.writeSync(this.fd, bytes, written);
    } catch (cause) {
      this.fail('writing', cause);
    }
  }

  sync(): void {
    if (this.fd === undefined) return;
    try {
      this.fs.fdatasyncSync(this.fd);
    } catch (cause) {
      // Data the OS could not flush may be lost or torn: same treatment as a failed write.
      this.fail('flushing', cause);
    }
  }

  private fail(what: string, cause: unknown): never {
    const error = new ShardWriteError(
      `${what} the shard file ${this.path} failed (${describeCause(cause)}); it may end in a torn line, which readers skip, and nothing more is appended to it`,
      this.path,
      { cause },
    );
    this.poison.error ??= error;
    throw error;
  }

  close(): void {
    if (this.fd !== undefined) {
      const fd = this.fd;
      this.fd = undefined;
      this.fs.closeSync(fd);
    }
  }
}

export function createShardWriter(
  resultsDir: string,
  failuresDir: string,
  writer: string,
  fs: ShardFs = NODE_FS,
): ShardWriter {
  if (!isWriterId(writer)) {
    throw new RangeError(`writer id "${writer}" may contain only a-z, 0-9, ".", "_", "-" (no ".."); use newWriterId()`);
  }
  const poison: Poison = { error: undefined };
  const results = new AppendFile(resultsDir, join(resultsDir, `${writer}.ndjson`), fs, poison);
  const failures = new AppendFile(failuresDir, join(failuresDir, `${writer}.ndjson`), fs, poison);
  let closed = false;
  const open = (): void => {
    if (closed) throw new Error(`shard writer ${writer} is closed`);
  };
  return {
    writer,
    appendResult(record: ResultRecord): void {
      open();
      const checked = ResultRecordSchema.safeParse(record);
      if (!checked.success)
        throw new TypeError(`refusing to write a malformed result record: ${checked.error.message}`);
      results.appendLine(`${JSON.stringify(checked.data)}\n`);
    },
    appendFailure(record: FailureRecord): void {
      open();
      const checked = FailureRecordSchema.safeParse(record);
      if (!checked.success)
        throw new TypeError(`refusing to write a malformed failure record: ${checked.error.message}`);
      failures.appendLine(`${JSON.stringify(checked.data)}\n`);
    },
    sync(): void {
      // Flush both even if the first fails, then report the first failure.
      let first: unknown;
      for (const file of [results, failures]) {
        try {
          file.sync();
        } catch (error) {
          first ??= error;
        }
      }
      if (first !== undefined) throw first;
    },
    close(): void {
      if (closed) return;
      closed = true;
      try {
        results.close();
      } finally {
        failures.close();
      }
    },
  };
}
