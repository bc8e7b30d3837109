import { createReadStream } from 'node:fs';
import { readdir } from 'node:fs/promises';
import { join } from 'node:path';
import type { z } from 'zod';

export interface StoreWarning {
  readonly kind: 'torn-line' | 'bad-line' | 'conflict' | 'foreign' | 'mismatch';
  readonly file: string;
  readonly line: number;
  readonly message: string;
}

export interface ScanOptions {
  readonly onWarning?: (w: StoreWarning) => void;
}

/** Shard files of a folder, sorted so every scan sees them in the same order. */
export async function listShards(folder: string): Promise<string[]> {
  let names: string[];
  try {
    names = await readdir(folder);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return [];
    throw error;
  }
  return names
    .filter((n) => n.endsWith('.ndjson') && !n.startsWith('.'))
    .sort()
    .map((n) => join(folder, n));
}

/**
 * Longest line a reader keeps. A record is a few kilobytes; a longer line is
 * damage or an attack, and holding it would cost memory without limit (and
 * fail outright past the longest string the runtime can build).
 */
export const MAX_LINE_BYTES = 16 * 1024 * 1024;

export interface RawLine {
  /** The line without its newline, or null when it was longer than the limit (skipped unread). */
  readonly text: string | null;
  readonly line: number;
  /** Byte offset of the line's first byte in the file. */
  readonly offset: number;
  /** Length in bytes, newline excluded. */
  readonly bytes: number;
  /** False only for a last line with no newline after it (a write cut short). */
  readonly terminated: boolean;
}

/**
 * Lines of a file, streamed in large chunks: memory stays at one chunk plus
 * at most `maxLineBytes` whatever the file holds. Knows whether the last line
 * ended with a newline, which is how a torn write is told apart from a bad
 * line in the middle. A line longer than `maxLineBytes` is passed over and
 * reported with `text: null`.
 */
export async function* readLines(file: string, maxLineBytes = MAX_LINE_BYTES): AsyncGenerator<RawLine> {
  let pending: Buffer[] = [];
  let pendingBytes = 0;
  // True once the current line has outgrown the limit: its bytes are counted, not kept.
  let skipping = false;
  let line = 0;
  let offset = 0;
  let lineStart = 0;
  const finish = (end: number, terminated: boolean): RawLine => {
    line++;
    const bytes = end - lineStart;
    const text = skipping
      ? null
      : pending.length === 1
        ? pending[0]!.toString('utf8')
        : Buffer.concat(pending, pendingBytes).toString('utf8');
    const raw: RawLine = { text, line, offset: lineStart, bytes, terminated };
    pending = [];
    pendingBytes = 0;
    skipping = false;
    return raw;
  };
  const keep = (piece: Buffer, copy: boolean): void => {
    if (skipping || piece.length === 0) return;
    if (pendingBytes + piece.length > maxLineBytes) {
      pending = [];
      pendingBytes = 0;
      skipping = true;
      return;
    }
    pending.push(copy ? Buffer.from(piece) : piece);
    pendingBytes += piece.length;
  };
  for await (const chunk of createReadStream(file, { highWaterMark: 1 << 20 }) as AsyncIterable<Buffer>) {
    let start = 0;
    for (;;) {
      const nl = chunk.indexOf(10, start);
      if (nl === -1) break;
      keep(chunk.subarray(start, nl), false);
      yield finish(offset + nl, true);
      start = nl + 1;
      lineStart = offset + start;
    }
    // A short tail is copied: a view would pin its whole 1 MiB chunk while the line goes on.
    if (start < chunk.length) keep(chunk.subarray(start), start > 0);
    offset += chunk.length;
  }
  if (offset > lineStart) yield finish(offset, false);
}

export interface ScannedRecord<T> {
  readonly record: T;
  readonly file: string;
  readonly line: number;
}

/**
 * Valid records of one sweep from every shard of a folder. A line that is not
 * a valid record is a 'bad-line' warning, or a 'torn-line' warning when it is
 * the unterminated last line of its file; records of another sweep are
 * skipped with one 'foreign' warning per file. With `check`, records of the
 * sweep that it finds wrong (a key that is not their content's) are set
 * aside with one 'mismatch' warning per file, naming the file and the count.
 */
export async function* scanShards<S extends z.ZodType<{ sweepHash: string }>>(
  folder: string,
  schema: S,
  sweepHash: string,
  options: ScanOptions,
  check?: (record: z.output<S>) => string | undefined,
): AsyncGenerator<ScannedRecord<z.output<S>>> {
  const warn = options.onWarning ?? (() => undefined);
  for (const file of await listShards(folder)) {
    let foreign = 0;
    let firstForeign = 0;
    let foreignHash = '';
    let mismatched = 0;
    let firstMismatch = 0;
    let mismatchReason = '';
    for await (const raw of readLines(file)) {
      if (raw.text === null) {
        const where = `${file}:${raw.line} (byte offset ${raw.offset})`;
        warn({
          kind: raw.terminated ? 'bad-line' : 'torn-line',
          file,
          line: raw.line,
          message: `${where}: a line of ${raw.bytes} bytes, longer than the ${MAX_LINE_BYTES} a record may have; skipped unread`,
        });
        continue;
      }
      if (raw.text.trim() === '') continue;
      let value: unknown;
      let valid = false;
      try {
        value = JSON.parse(raw.text);
        const checked = schema.safeParse(value);
        if (checked.success) {
          value = checked.data;
          valid = true;
        }
      } catch {
        valid = false;
      }
      if (!valid) {
        if (raw.terminated) {
          warn({ kind: 'bad-line', file, line: raw.line, message: `${file}:${raw.line}: not a valid record; ignored` });
        } else {
          warn({
            kind: 'torn-line',
            file,
            line: raw.line,
            message: `${file}:${raw.line}: incomplete last line (a write was cut short); ignored, its job counts as not done`,
          });
        }
        continue;
      }
      const record = value as z.output<S>;
      if (record.sweepHash !== sweepHash) {
        if (foreign === 0) {
          firstForeign = raw.line;
          foreignHash = record.sweepHash;
        }
        foreign++;
        continue;
      }
      const wrong = check?.(record);
      if (wrong !== undefined) {
        if (mismatched === 0) {
          firstMismatch = raw.line;
          mismatchReason = wrong;
        }
        mismatched++;
        continue;
      }
      yield { record, file, line: raw.line };
    }
    if (mismatched > 0) {
      warn({
        kind: 'mismatch',
        file,
        line: firstMismatch,
        message: `${file}: ${mismatched} record(s) whose key, seed or point is not what this sweep gives for their content set aside (first at line ${firstMismatch}: ${mismatchReason}); their jobs count as not done`,
      });
    }
    if (foreign > 0) {
      warn({
        kind: 'foreign',
        file,
        line: firstForeign,
        message: `${file}: ${foreign} record(s) of another sweep (hash ${foreignHash.slice(0, 16)}, first at line ${firstForeign}) ignored; this folder holds sweep ${sweepHash.slice(0, 16)}`,
      });
    }
  }
}

/** 32-bit FNV-1a of a string's UTF-16 code units: a small fingerprint for duplicate checks. */
export function fnv1a32(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}
