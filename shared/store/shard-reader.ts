import { createReadStream } from 'node:fs';
import { readdir } from 'node:fs/promises';
import { join } from 'node:path';
import type { z } from 'zod';

export interface StoreWarning {
  readonly kind: 'torn-line' | 'bad-line' | 'conflict' | 'foreign';
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

export interface RawLine {
  readonly text: string;
  readonly line: number;
  /** False only for a last line with no newline after it (a write cut short). */
  readonly terminated: boolean;
}

/**
 * Lines of a file, streamed in large chunks (constant memory whatever the file
 * size). Knows whether the last line ended with a newline, which is how a
 * torn write is told apart from a bad line in the middle.
 */
export async function* readLines(file: string): AsyncGenerator<RawLine> {
  let pending: Buffer[] = [];
  let line = 0;
  for await (const chunk of createReadStream(file, { highWaterMark: 1 << 20 }) as AsyncIterable<Buffer>) {
    let start = 0;
    for (;;) {
      const nl = chunk.indexOf(10, start);
      if (nl === -1) break;
      line++;
      const piece = chunk.subarray(start, nl);
      const text = pending.length === 0 ? piece.toString('utf8') : Buffer.concat([...pending, piece]).toString('utf8');
      pending = [];
      yield { text, line, terminated: true };
      start = nl + 1;
    }
    if (start < chunk.length) pending.push(chunk.subarray(start));
  }
  if (pending.length > 0) {
    line++;
    yield { text: Buffer.concat(pending).toString('utf8'), line, terminated: false };
  }
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
 * skipped with one 'foreign' warning per file.
 */
export async function* scanShards<S extends z.ZodType<{ sweepHash: string }>>(
  folder: string,
  schema: S,
  sweepHash: string,
  options: ScanOptions,
): AsyncGenerator<ScannedRecord<z.output<S>>> {
  const warn = options.onWarning ?? (() => undefined);
  for (const file of await listShards(folder)) {
    let foreign = 0;
    let firstForeign = 0;
    let foreignHash = '';
    for await (const raw of readLines(file)) {
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
      yield { record, file, line: raw.line };
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
