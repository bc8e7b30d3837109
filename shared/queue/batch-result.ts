import { brotliCompressSync, brotliDecompressSync, constants, inflateRawSync } from 'node:zlib';
import { z } from 'zod';
import { MAX_BATCH_TRIALS } from './batch-size.js';
import { fromColumns, toColumns } from './record-columns.js';

/** Largest text the records of one batch may unpack to (a record is a few hundred characters). */
export const MAX_RESULT_BODY_CHARS = 16 << 20;

/**
 * Brotli quality for packing: 5 costs a few microseconds a record; 6 to 9
 * pack result batches no smaller, and 11 packs them about 13% smaller at
 * some 150 microseconds a record, too slow for a worker between batches.
 */
const PACK_QUALITY = 5;

const PackedSchema = z
  .string()
  .max(MAX_RESULT_BODY_CHARS)
  .regex(/^[A-Za-z0-9+/]*={0,2}$/, 'packed records are base64');

/** Written by workers of earlier versions (they may still sit in Redis): NDJSON lines, raw deflate, base64. */
const BatchResultV1Schema = z
  .object({ v: z.literal(1), records: z.number().int().min(0).max(MAX_BATCH_TRIALS), packed: PackedSchema })
  .strict();

/** Written now: the records as columns (record-columns.ts) in JSON, brotli, base64. */
const BatchResultV2Schema = z
  .object({ v: z.literal(2), records: z.number().int().min(0).max(MAX_BATCH_TRIALS), packed: PackedSchema })
  .strict();

/**
 * A finished batch's return value: its trials' result records, packed.
 * Records of one batch repeat their sweep hash, model, writer, run and often
 * their point, which the columns store once; what varies (keys, seeds,
 * finish times, metrics) sits in one column per field, where brotli finds
 * its likeness. They cost Redis little more than their keys and seeds until
 * `gather` copies them.
 */
export const BatchResultSchema = z.discriminatedUnion('v', [BatchResultV1Schema, BatchResultV2Schema]);
export type BatchResult = z.infer<typeof BatchResultSchema>;

export function packResults(records: readonly unknown[]): BatchResult {
  const text = Buffer.from(JSON.stringify(toColumns(records)));
  const packed = brotliCompressSync(text, {
    params: {
      [constants.BROTLI_PARAM_QUALITY]: PACK_QUALITY,
      [constants.BROTLI_PARAM_MODE]: constants.BROTLI_MODE_TEXT,
      [constants.BROTLI_PARAM_SIZE_HINT]: text.length,
    },
  });
  return { v: 2, records: records.length, packed: packed.toString('base64') };
}

/**
 * The records a finished job returned: a batch's packed records (either
 * version), or the single record a one-trial job of an earlier version
 * returned. Untrusted: each is still to be checked as a record. Undefined
 * when the value is none of these (or does not unpack); never throws.
 */
export function unpackResults(value: unknown): unknown[] | undefined {
  const batch = BatchResultSchema.safeParse(value);
  if (!batch.success) return typeof value === 'object' && value !== null && 'key' in value ? [value] : undefined;
  if (batch.data.records === 0) return [];
  const bytes = Buffer.from(batch.data.packed, 'base64');
  return batch.data.v === 1 ? unpackRows(bytes, batch.data.records) : unpackColumns(bytes, batch.data.records);
}

function unpackRows(bytes: Buffer, count: number): unknown[] | undefined {
  let text: string;
  try {
    text = inflateRawSync(bytes, { maxOutputLength: MAX_RESULT_BODY_CHARS }).toString('utf8');
  } catch {
    return undefined;
  }
  const lines = text.split('\n');
  if (lines.length !== count) return undefined;
  const records: unknown[] = [];
  for (const line of lines) {
    try {
      records.push(JSON.parse(line));
    } catch {
      return undefined;
    }
  }
  return records;
}

function unpackColumns(bytes: Buffer, count: number): unknown[] | undefined {
  let text: string;
  let table: unknown;
  try {
    text = brotliDecompressSync(bytes, { maxOutputLength: MAX_RESULT_BODY_CHARS }).toString('utf8');
    table = JSON.parse(text);
  } catch {
    return undefined;
  }
  // The same bound as for rows, on the records the columns unfold into.
  const records = fromColumns(table, count, MAX_RESULT_BODY_CHARS - text.length);
  return records?.length === count ? records : undefined;
}
