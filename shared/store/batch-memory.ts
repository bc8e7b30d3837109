import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { z } from 'zod';
import { writeFileAtomic } from '../atomic-write.js';
import { MAX_BATCH_TRIALS } from '../queue/batch-size.js';

/**
 * The trials per queue job agreed for a sweep, kept in its folder beside
 * sweep.json as well as in Redis. Blocks of trials are cut by that size and
 * named by their first key; after Redis lost its copy (a restart without
 * persistence, FLUSHALL), `requeue` and `finish` cut the same blocks again
 * instead of timing the model anew, so the job names of trials still running
 * in workers stay what they were.
 */
export const BATCH_MEMORY_FILE = 'queue-batch.json';

const BatchMemorySchema = z.object({
  v: z.literal(1),
  hash: z.string(),
  batch: z.number().int().min(1).max(MAX_BATCH_TRIALS),
});

/** The remembered size for the sweep of `hash` in `dir`, or undefined (none, unreadable, or another sweep's). */
export async function readBatchMemory(dir: string, hash: string): Promise<number | undefined> {
  let text: string;
  try {
    text = await readFile(join(dir, BATCH_MEMORY_FILE), 'utf8');
  } catch {
    return undefined;
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch {
    return undefined;
  }
  const parsed = BatchMemorySchema.safeParse(value);
  return parsed.success && parsed.data.hash === hash ? parsed.data.batch : undefined;
}

/** Remember `batch` for the sweep of `hash` in `dir` (atomically: a reader sees the old file or the new one). */
export async function writeBatchMemory(dir: string, hash: string, batch: number): Promise<void> {
  if ((await readBatchMemory(dir, hash)) === batch) return;
  const memory: z.infer<typeof BatchMemorySchema> = { v: 1, hash, batch };
  await writeFileAtomic(join(dir, BATCH_MEMORY_FILE), `${JSON.stringify(memory)}\n`, { createFolder: false });
}
