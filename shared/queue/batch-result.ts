import { deflateRawSync, inflateRawSync } from 'node:zlib';
import { z } from 'zod';
import { MAX_BATCH_TRIALS } from './batch-size.js';

/** Largest text the records of one batch may unpack to (a record is a few hundred characters). */
export const MAX_RESULT_BODY_CHARS = 16 << 20;

/**
 * A finished batch's return value: its trials' result records, packed (raw
 * deflate, base64). Records of one batch repeat their sweep hash, model,
 * point, writer and most of their finish time, so packed they cost Redis
 * little more than their keys, seeds and metrics until `gather` copies them.
 */
export const BatchResultSchema = z
  .object({
    v: z.literal(1),
    records: z.number().int().min(0).max(MAX_BATCH_TRIALS),
    packed: z.string().max(MAX_RESULT_BODY_CHARS),
  })
  .strict();
export type BatchResult = z.infer<typeof BatchResultSchema>;

export function packResults(records: readonly unknown[]): BatchResult {
  return {
    v: 1,
    records: records.length,
    packed: deflateRawSync(Buffer.from(records.map((r) => JSON.stringify(r)).join('\n'))).toString('base64'),
  };
}

/**
 * The records a finished job returned: a batch's packed records, or the
 * single record a one-trial job of an earlier version returned. Untrusted:
 * each is still to be checked as a record. Undefined when the value is
 * neither (or does not unpack).
 */
export function unpackResults(value: unknown): unknown[] | undefined {
  const batch = BatchResultSchema.safeParse(value);
  if (!batch.success) return typeof value === 'object' && value !== null && 'key' in value ? [value] : undefined;
  if (batch.data.records === 0) return [];
  let text: string;
  try {
    text = inflateRawSync(Buffer.from(batch.data.packed, 'base64'), {
      maxOutputLength: MAX_RESULT_BODY_CHARS,
    }).toString('utf8');
  } catch {
    return undefined;
  }
  const lines = text.split('\n');
  if (lines.length !== batch.data.records) return undefined;
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
