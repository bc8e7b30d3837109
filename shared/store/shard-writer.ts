import * as nodeFs from 'node:fs';
import { join } from 'node:path';
import { type FailureRecord, FailureRecordSchema, type ResultRecord, ResultRecordSchema } from '../schemas/records.js';
import { isWriterId } from './writer-id.js';

export interface ShardWriter {
  readonly writer: string;
  /**
   * Holds the line until the end of this turn of the event loop, or the next
   * sync, close or full buffer, whichever comes first, then writes every held
   * line with one write call: a kill never leaves half a record except a torn
   * LAST line. A failed write throws ShardWriteError from the
   * call that wrote (sync, syncAsync, close, or this one when the buffer was
   * full), and every later call throws too (nothing is ever appended after a
   * torn line).
   */
  appendResult(record: ResultRecord): void;
  /**
   * A result record known valid, written without checking it again: one made
   * by a pool thread (worker/run-job.ts `succeeded`) from a checked payload
   * and checked metrics, valid by construction, or one that is the output of
   * ResultRecordSchema.safeParse (gather). Every other record goes through
   * appendResult.
   */
  appendCheckedResult(record: ResultRecord): void;
  appendFailure(record: FailureRecord): void;
  /** Lines appended so far (results and failures): a sync started now covers this many. */
  readonly appended: number;
  /** fdatasync both shard files, blocking this thread. */
  sync(): void;
  /**
   * fdatasync both shard files off this thread (libuv's pool); covers every
   * line appended before the call. Rejects with ShardWriteError and poisons
   * the writer as a failed write does.
   */
  syncAsync(): Promise<void>;
  /** Closes the files; one with a syncAsync still running is closed once it ends. */
  close(): void;
}

/** The file calls a shard writer makes; replaceable so tests can inject a failing disk. */
export interface ShardFs {
  mkdirSync(path: string, options: { recursive: true }): unknown;
  openSync(path: string, flags: 'a'): number;
  writeSync(fd: number, buffer: Uint8Array, offset?: number): number;
  fdatasyncSync(fd: number): void;
  /** fdatasync off the main thread; when absent, syncAsync() falls back to fdatasyncSync. */
  fdatasync?(fd: number, done: (error: NodeJS.ErrnoException | null) => void): void;
  closeSync(fd: number): void;
}

const NODE_FS: ShardFs = {
  mkdirSync: (path, options) => nodeFs.mkdirSync(path, options),
  openSync: (path, flags) => nodeFs.openSync(path, flags),
  writeSync: (fd, buffer, offset) => nodeFs.writeSync(fd, buffer, offset),
  fdatasyncSync: (fd) => nodeFs.fdatasyncSync(fd),
  fdatasync: (fd, done) => nodeFs.fdatasync(fd, done),
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

/** Lines held before they are written at once, when no sync asks for them sooner. */
const FLUSH_BYTES = 256 * 1024;

/**
 * Appends whole lines to one file, opened lazily in append mode. Lines are
 * held and written together, one write call, at the end of the event loop's
 * turn (so the records of jobs that finished together cost one call), or
 * earlier when a sync starts, at close, or once they reach FLUSH_BYTES. A
 * write that fails there poisons the writer; the next call reports it.
 */
class AppendFile {
  private fd: number | undefined;
  private held: string[] = [];
  private heldBytes = 0;
  private flushScheduled = false;
  private readonly flushLater = (): void => {
    this.flushScheduled = false;
    try {
      this.flush();
    } catch {
      // Poisoned: the next append, sync or close throws the error.
    }
  };
  /** Asynchronous syncs running on `fd`: it is closed only once they end, so the number is never reused under one. */
  private syncing = 0;
  private closeWhenIdle: number | undefined;
  constructor(
    private readonly folder: string,
    private readonly path: string,
    private readonly fs: ShardFs,
    private readonly poison: Poison,
  ) {}

  appendLine(line: string): void {
    // After a failed write nothing more is appended; the caller gets that failure itself, whichever
    // call notices it first (a write is deferred, so an append may come before the sync that would have).
    this.throwIfPoisoned();
    this.held.push(line);
    this.heldBytes += line.length;
    if (this.heldBytes >= FLUSH_BYTES) this.flush();
    else if (!this.flushScheduled) {
      this.flushScheduled = true;
      setImmediate(this.flushLater);
    }
  }

  /** The error of an earlier failed write or flush, thrown again. */
  private throwIfPoisoned(): void {
    const earlier = this.poison.error;
    if (earlier !== undefined) throw earlier;
  }

  /** Write the held lines; a failure poisons the writer (the file may end in a torn line). */
  private flush(): void {
    if (this.held.length === 0) return;
    if (this.poison.error !== undefined) {
      // After a failed write nothing more is written, to either shard: these lines
      // were never covered by a sync, so their jobs were never counted done.
      this.held = [];
      this.heldBytes = 0;
      return;
    }
    const text = this.held.length === 1 ? (this.held[0] as string) : this.held.join('');
    this.held = [];
    this.heldBytes = 0;
    try {
      if (this.fd === undefined) {
        this.fs.mkdirSync(this.folder, { recursive: true });
        this.fd = this.fs.openSync(this.path, 'a');
      }
      const bytes = Buffer.from(text, 'utf8');
      let written = this.fs.writeSync(this.fd, bytes);
      // A regular file takes the whole buffer at once; finish a short write if the OS ever gives one.
      while (written < bytes.length) written += this.fs.writeSync(this.fd, bytes, written);
    } catch (cause) {
      this.fail('writing', cause);
    }
  }

  sync(): void {
    this.throwIfPoisoned();
    this.flush();
    if (this.fd === undefined) return;
    try {
      this.fs.fdatasyncSync(this.fd);
    } catch (cause) {
      // Data the OS could not flush may be lost or torn: same treatment as a failed write.
      this.fail('flushing', cause);
    }
  }

  syncAsync(): Promise<void> {
    try {
      this.throwIfPoisoned();
      this.flush();
    } catch (error) {
      return Promise.reject(error as Error);
    }
    const fd = this.fd;
    if (fd === undefined) return Promise.resolve();
    const fs = this.fs;
    if (fs.fdatasync === undefined) {
      try {
        this.sync();
        return Promise.resolve();
      } catch (error) {
        return Promise.reject(error as Error);
      }
    }
    this.syncing++;
    return new Promise<void>((done, reject) => {
      fs.fdatasync?.(fd, (cause) => {
        this.syncing--;
        if (this.syncing === 0 && this.closeWhenIdle !== undefined) {
          const closing = this.closeWhenIdle;
          this.closeWhenIdle = undefined;
          try {
            this.fs.closeSync(closing);
          } catch {
            // Closed after a failed sync: the failure is reported below or was already.
          }
        }
        if (cause === null) {
          done();
          return;
        }
        try {
          this.fail('flushing', cause);
        } catch (error) {
          reject(error as Error);
        }
      });
    });
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

  /** Writes what is held, then closes; a failed write still closes the file and then throws. */
  close(): void {
    try {
      this.flush();
    } finally {
      this.closeFile();
    }
  }

  private closeFile(): void {
    if (this.fd !== undefined) {
      const fd = this.fd;
      this.fd = undefined;
      if (this.syncing > 0) this.closeWhenIdle = fd;
      else this.fs.closeSync(fd);
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
  let appended = 0;
  const results = new AppendFile(resultsDir, join(resultsDir, `${writer}.ndjson`), fs, poison);
  const failures = new AppendFile(failuresDir, join(failuresDir, `${writer}.ndjson`), fs, poison);
  let closed = false;
  const open = (): void => {
    if (closed) throw new Error(`shard writer ${writer} is closed`);
  };
  const writeResult = (record: ResultRecord): void => {
    open();
    results.appendLine(`${JSON.stringify(record)}\n`);
    appended++;
  };
  return {
    writer,
    appendResult(record: ResultRecord): void {
      open();
      const checked = ResultRecordSchema.safeParse(record);
      if (!checked.success)
        throw new TypeError(`refusing to write a malformed result record: ${checked.error.message}`);
      writeResult(checked.data);
    },
    appendCheckedResult: writeResult,
    appendFailure(record: FailureRecord): void {
      open();
      const checked = FailureRecordSchema.safeParse(record);
      if (!checked.success)
        throw new TypeError(`refusing to write a malformed failure record: ${checked.error.message}`);
      failures.appendLine(`${JSON.stringify(checked.data)}\n`);
      appended++;
    },
    get appended(): number {
      return appended;
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
    async syncAsync(): Promise<void> {
      // Both run at once; the first failure is reported after both ended.
      const settled = await Promise.allSettled([results.syncAsync(), failures.syncAsync()]);
      for (const outcome of settled) if (outcome.status === 'rejected') throw outcome.reason;
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
