import { hostname } from 'node:os';
import type { Logger } from '../shared/logger.js';
import { looksLikeBatch, unpackBatch } from '../shared/queue/batch-payload.js';
import { unpackResults } from '../shared/queue/batch-result.js';
import type { FinishedValue, WorkQueue } from '../shared/queue/work-queue.js';
import { ResultRecordSchema } from '../shared/schemas/records.js';
import { recordIdentityCheck } from '../shared/store/record-identity.js';
import { newWriterId, ResultStore, type ShardWriter } from '../shared/store/result-store.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { type QueueSettings, withQueue } from './queue-session.js';

export interface GatherResult {
  readonly name: string;
  /** Finished trials of this sweep found in the queue. */
  readonly found: number;
  /** Records written to this folder's shards by this call. */
  readonly copied: number;
  /** Records that were already on disk (shared disk, or an earlier gather). */
  readonly alreadyOnDisk: number;
  /** Finished queue jobs whose return value is not the records of their trials: left in the queue and reported. */
  readonly rejected: number;
  /** Finished queue jobs (of one or more trials) removed after their records were safely on disk. */
  readonly removed: number;
  readonly writer: string | null;
}

/** Queue jobs read per step. */
const CHUNK = 500;

/** Trial keys a finished job ran: a batch's trials, or the job's own key for a one-trial job. */
function trialKeysOf(finished: FinishedValue): ReadonlySet<string> | undefined {
  if (!looksLikeBatch(finished.data)) return new Set([finished.key]);
  const batch = unpackBatch(finished.data);
  return batch.ok ? new Set(batch.trials.keys) : undefined;
}

/** `gather DIR`: the sweep of the folder, gathered from the queue the settings name. */
export async function gatherSweep(
  dir: string,
  settings: QueueSettings,
  logger: Logger | undefined,
): Promise<GatherResult> {
  const store = ResultStore.open(dir);
  const sweep = await store.readSweep();
  return withQueue(settings, logger, (queue) => gatherFrom(queue, store, sweep, logger));
}

/**
 * Copy the records that finished jobs carry as return values into the
 * store's shards, fdatasync, and only then remove those jobs from the queue,
 * so its memory stays bounded and nothing is lost if gather is killed
 * half-way (a repeat copies nothing twice: keys on disk are skipped).
 */
export async function gatherFrom(
  queue: WorkQueue,
  store: ResultStore,
  sweep: LoadedSweep,
  logger: Logger | undefined,
  /** Shard to append to; a caller that gathers again and again (finish) keeps one file instead of one per call. */
  writerId: string = newWriterId(`gather-${hostname()}`),
): Promise<GatherResult> {
  // Listed first, then worked through: removing while paging would shift the pages.
  const keys: string[] = [];
  let found = 0;
  for await (const page of queue.finishedJobs(sweep.hash)) {
    for (const job of page) {
      keys.push(job.key);
      found += job.trials;
    }
  }
  const onDisk = await store.completedKeys({
    onWarning: (w) => logger?.warn({ file: w.file, line: w.line, kind: w.kind }, w.message),
  });
  // A return value is whatever Redis holds: each record must be one of the trials the job ran.
  const check = recordIdentityCheck(sweep);
  let misnamed = 0;
  let firstMisnamed = '';
  let writer: ShardWriter | undefined;
  let copied = 0;
  let alreadyOnDisk = 0;
  let rejected = 0;
  let removed = 0;
  try {
    for (let i = 0; i < keys.length; i += CHUNK) {
      const safe: string[] = [];
      for (const finished of await queue.finishedValues(sweep.hash, keys.slice(i, i + CHUNK))) {
        // Every trial the job ran, and nothing else: one record each, of this sweep.
        const trials = trialKeysOf(finished);
        const values = unpackResults(finished.value);
        const records = (values ?? []).map((v) => ResultRecordSchema.safeParse(v));
        const good =
          trials !== undefined &&
          values !== undefined &&
          records.length === trials.size &&
          new Set(records.map((r) => (r.success ? r.data.key : ''))).size === trials.size &&
          records.every((r) => r.success && trials.has(r.data.key) && r.data.sweepHash === sweep.hash);
        if (!good) {
          rejected++;
          logger?.warn(
            { key: finished.key },
            'a finished job does not carry the records of its trials; left in the queue',
          );
          continue;
        }
        const wrong = records.map((r) => (r.success ? check(r.data) : 'not a record')).find((w) => w !== undefined);
        if (wrong !== undefined) {
          rejected++;
          if (misnamed++ === 0) firstMisnamed = `${finished.key}: ${wrong}`;
          continue;
        }
        for (const record of records) {
          if (!record.success) continue;
          if (onDisk.has(record.data.key)) {
            alreadyOnDisk++;
          } else {
            writer ??= store.openWriter(writerId);
            // Parsed by ResultRecordSchema above: no second check.
            writer.appendCheckedResult(record.data);
            onDisk.add(record.data.key);
            copied++;
          }
        }
        safe.push(finished.key);
      }
      // The records must be durable before the queue may forget them.
      writer?.sync();
      removed += await queue.removeFinished(sweep.hash, safe);
    }
  } finally {
    writer?.close();
  }
  if (misnamed > 0) {
    logger?.warn(
      { sweep: sweep.spec.name, count: misnamed, first: firstMisnamed },
      `${misnamed} finished job(s) carry a record whose key, seed or point is not what this sweep gives; not copied, left in the queue`,
    );
  }
  logger?.info({ sweep: sweep.spec.name, found, copied, removed }, 'results gathered');
  return {
    name: sweep.spec.name,
    found,
    copied,
    alreadyOnDisk,
    rejected,
    removed,
    writer: writer?.writer ?? null,
  };
}
