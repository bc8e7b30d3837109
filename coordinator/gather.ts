import { hostname } from 'node:os';
import type { Logger } from '../shared/logger.js';
import { jobRedisKey, keyOfJobId } from '../shared/queue-names.js';
import { ResultRecordSchema } from '../shared/schemas/records.js';
import { newWriterId, ResultStore, type ShardWriter } from '../shared/store/result-store.js';
import { collectSweepIds, removeJobs } from './queue-scan.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface GatherResult {
  readonly name: string;
  /** Finished jobs of this sweep found in Redis. */
  readonly found: number;
  /** Records written to this folder's shards by this call. */
  readonly copied: number;
  /** Records that were already on disk (shared disk, or an earlier gather). */
  readonly alreadyOnDisk: number;
  /** Return values that are not a record of this sweep: left in Redis and reported. */
  readonly rejected: number;
  /** Finished jobs removed from Redis after their record was safely on disk. */
  readonly removed: number;
  readonly writer: string | null;
}

const CHUNK = 500;

/**
 * Copy the records that finished jobs carry as return values into DIR's
 * shards, fdatasync, and only then remove those jobs from Redis, so Redis
 * memory stays bounded and nothing is lost if gather is killed half-way
 * (a repeat copies nothing twice: keys on disk are skipped).
 */
export async function gatherSweep(
  dir: string,
  settings: QueueSettings,
  logger: Logger | undefined,
): Promise<GatherResult> {
  const store = ResultStore.open(dir);
  const sweep = await store.readSweep();
  return withQueue(settings, logger, async ({ client, queue }) => {
    const ids = [...(await collectSweepIds(client, settings.queue, sweep.hash, ['completed']))];
    const onDisk = await store.completedKeys();
    let writer: ShardWriter | undefined;
    let copied = 0;
    let alreadyOnDisk = 0;
    let rejected = 0;
    let removed = 0;
    try {
      for (let i = 0; i < ids.length; i += CHUNK) {
        const chunk = ids.slice(i, i + CHUNK);
        const pipeline = client.pipeline();
        for (const id of chunk) pipeline.hget(jobRedisKey(settings.queue, id), 'returnvalue');
        const replies = (await pipeline.exec()) ?? [];
        const safe: string[] = [];
        for (const [j, id] of chunk.entries()) {
          const [error, raw] = replies[j] ?? [null, null];
          if (error !== null) throw error;
          // Removed by another gather since the scan: nothing to do.
          if (raw === null) continue;
          let value: unknown;
          try {
            value = JSON.parse(String(raw));
          } catch {
            value = undefined;
          }
          const record = ResultRecordSchema.safeParse(value);
          if (!record.success || record.data.key !== keyOfJobId(id) || record.data.sweepHash !== sweep.hash) {
            rejected++;
            logger?.warn({ job: id }, 'a finished job does not carry a record of this sweep; left in Redis');
            continue;
          }
          if (onDisk.has(record.data.key)) {
            alreadyOnDisk++;
          } else {
            writer ??= store.openWriter(newWriterId(`gather-${hostname()}`));
            writer.appendResult(record.data);
            onDisk.add(record.data.key);
            copied++;
          }
          safe.push(id);
        }
        // The records must be durable before Redis may forget them.
        writer?.sync();
        removed += await removeJobs(queue, safe);
      }
    } finally {
      writer?.close();
    }
    logger?.info({ sweep: sweep.spec.name, found: ids.length, copied, removed }, 'results gathered');
    return {
      name: sweep.spec.name,
      found: ids.length,
      copied,
      alreadyOnDisk,
      rejected,
      removed,
      writer: writer?.writer ?? null,
    };
  });
}
