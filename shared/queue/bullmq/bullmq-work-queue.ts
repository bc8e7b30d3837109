import { randomBytes } from 'node:crypto';
import { type JobType, Queue } from 'bullmq';
import type { ChainableCommander, Redis } from 'ioredis';
import type { Logger } from '../../logger.js';
import { parseRedisUrl, type RedisTarget } from '../../redis-url.js';
import type { QueueSettings } from '../queue-settings.js';
import type { QueueTarget } from '../queue-target.js';
import type {
  AddOptions,
  AddResult,
  FinishedJob,
  FinishedValue,
  QueueEntry,
  SweepQueueCounts,
  WorkQueue,
} from '../work-queue.js';
import {
  batchSizeRedisKey,
  jobIdFor,
  jobIdPrefix,
  jobName,
  jobRedisKey,
  keyOfJobId,
  stateRedisKey,
  trialsOfJobName,
} from './job-ids.js';
import { jobOptions } from './job-options.js';
import { asServiceError, closeRedis } from './redis-connect.js';

/** BullMQ's states in which a job has not started, grouped the way people ask about them. */
const WAITING_STATES: readonly JobType[] = ['wait', 'prioritized', 'waiting-children'];

/** Ids per page when reading a state set: a queue of millions never comes back in one reply. */
export const SCAN_PAGE = 1_000;
/** Removals in flight at a time. */
const REMOVE_BATCH = 500;
/** Entries a cancel step looks at: one short script run, so Redis is never blocked for long. */
export const CANCEL_PAGE = 1_000;
/** Cancel repeats its pass while the previous one removed something (a queue that changes meanwhile). */
const CANCEL_PASSES = 10;

/**
 * One cancel step over one page of a not-started state, run as a single Lua
 * script so that nothing happens between looking at a job and removing it:
 * a job that a worker took or finished before the script ran is no longer
 * in the page, and one still in it cannot be taken while the script runs.
 * (Snapshotting ids and removing them one by one afterwards deleted jobs,
 * records included, that finished in between.)
 *
 * KEYS[1]: the state (the `wait` or `paused` list, the `delayed` or
 * `prioritized` sorted set). ARGV: 'list' or 'zset'; the job key base
 * `<prefix>:<queue>:`; the sweep's job id prefix; the page start; the page
 * size; a marker that no job id can equal (ids of ours hold no ':').
 * Returns { removed, entries of other sweeps in the page, entries in the page,
 * trials the removed jobs carried (from their names, see job-ids.ts) }.
 * Ours in a list are overwritten by the marker (LSET) and the markers then go
 * in one LREM that stops at the last of them, so a page costs its own position
 * in the list instead of one list scan per job.
 */
const CANCEL_PAGE_SCRIPT = `
local kind, base, prefix, marker = ARGV[1], ARGV[2], ARGV[3], ARGV[6]
local start, size = tonumber(ARGV[4]), tonumber(ARGV[5])
local ids
if kind == 'list' then
  ids = redis.call('LRANGE', KEYS[1], start, start + size - 1)
else
  ids = redis.call('ZRANGE', KEYS[1], start, start + size - 1)
end
local removed, others, trialsRemoved = 0, 0, 0
for i, id in ipairs(ids) do
  if string.sub(id, 1, #prefix) == prefix then
    if kind == 'list' then
      redis.call('LSET', KEYS[1], start + i - 1, marker)
    else
      redis.call('ZREM', KEYS[1], id)
    end
    local job = base .. id
    local trials = tonumber(string.match(redis.call('HGET', job, 'name') or '', '#(%d+)$') or '1')
    redis.call('DEL', job, job .. ':logs', job .. ':dependencies', job .. ':processed', job .. ':failed', job .. ':unsuccessful')
    removed = removed + 1
    trialsRemoved = trialsRemoved + trials
  else
    others = others + 1
  end
end
if kind == 'list' and removed > 0 then
  redis.call('LREM', KEYS[1], removed, marker)
end
return { removed, others, #ids, trialsRemoved }
`;

interface CancelCommand {
  recallscapeCancelPage(
    state: string,
    kind: 'list' | 'zset',
    base: string,
    idPrefix: string,
    start: number,
    size: number,
    marker: string,
  ): Promise<[number, number, number, number]>;
}

/** Results of a pipeline, with the first command error thrown. */
async function replies(pipeline: ChainableCommander): Promise<unknown[]> {
  const results = (await pipeline.exec()) ?? [];
  return results.map(([error, value]) => {
    if (error !== null) throw error;
    return value;
  });
}

/** Entries kept in the queue's event stream (BullMQ's own default is 10,000). */
export const EVENT_STREAM_LENGTH = 100;

/**
 * The coordinator's side of a BullMQ queue on Redis. Uses BullMQ's public
 * API where its cost is acceptable and reads Redis directly where it is not;
 * each such place says what it measured (`npm run bench -- queue` and the
 * figures in docs/operations.md, 20,000 jobs on the shared 2-core machine).
 */
export class BullmqWorkQueue implements WorkQueue {
  private constructor(
    private readonly client: Redis,
    private readonly queue: Queue,
    private readonly target: QueueTarget,
    private readonly redis: RedisTarget,
  ) {}

  /** Open the queue over a connected client (which it then owns); one ServiceError line on failure. */
  static async over(client: Redis, settings: QueueSettings, logger?: Logger): Promise<BullmqWorkQueue> {
    const queue = new Queue(settings.queue.name, {
      connection: client,
      prefix: settings.queue.prefix,
      // The event stream is for live dashboards only, and nothing here reads
      // it; keep it short: each 'completed' entry copies the job's return
      // value, a packed batch of records for a worker without a shared disk.
      // Trimmed approximately, so it holds between this and this + 100 entries.
      streams: { events: { maxLen: EVENT_STREAM_LENGTH } },
    });
    queue.on('error', (error) => logger?.warn({ reason: error.message }, 'queue trouble'));
    try {
      await queue.waitUntilReady();
    } catch (error) {
      await closeRedis(client);
      throw asServiceError(error, parseRedisUrl(settings.url));
    }
    return new BullmqWorkQueue(client, queue, settings.queue, parseRedisUrl(settings.url));
  }

  /** Run a Redis operation; its failures become one ServiceError line. */
  private async guard<T>(operation: () => Promise<T>): Promise<T> {
    try {
      return await operation();
    } catch (error) {
      throw asServiceError(error, this.redis);
    }
  }

  add(
    sweep: { readonly hash: string; readonly name: string },
    entries: readonly QueueEntry[],
    options: AddOptions,
  ): Promise<AddResult> {
    return this.guard(async () => {
      const { client, target } = this;
      const ids = entries.map((entry) => jobIdFor(sweep.hash, entry.key));
      // Existence per job id: a pipelined EXISTS. BullMQ's getJobState would answer
      // too, but it searches the wait list (LPOS) for every id: 1.0 ms per id against
      // 0.05 ms with 20,000 jobs waiting, and it grows with the queue.
      const exists = await replies(client.pipeline(ids.map((id) => ['exists', jobRedisKey(target, id)])));
      // Only jobs already in Redis can be in the failed set: ask about those alone.
      const present = ids.filter((_, i) => exists[i] !== 0);
      const failedKey = stateRedisKey(target, 'failed');
      const scores =
        present.length === 0 ? [] : await replies(client.pipeline(present.map((id) => ['zscore', failedKey, id])));
      const failed = new Set(present.filter((_, i) => scores[i] !== null));
      const toAdd: QueueEntry[] = [];
      const toRetry: QueueEntry[] = [];
      let presentCount = 0;
      let failedKept = 0;
      let retried = 0;
      for (const [i, entry] of entries.entries()) {
        const id = ids[i] as string;
        if (exists[i] === 0) toAdd.push(entry);
        else if (failed.has(id) && options.retryFailed) toRetry.push(entry);
        else if (failed.has(id)) failedKept += entry.trials ?? 1;
        else presentCount += entry.trials ?? 1;
      }
      const added = toAdd.reduce((sum, entry) => sum + (entry.trials ?? 1), 0);
      // A failed job keeps its id: it has to go before a fresh copy can be added (0 = someone else moved it).
      const removed = await Promise.all(toRetry.map((entry) => this.queue.remove(jobIdFor(sweep.hash, entry.key))));
      toRetry.forEach((entry, i) => {
        if (removed[i] === 1) {
          toAdd.push(entry);
          retried += entry.trials ?? 1;
        } else {
          presentCount += entry.trials ?? 1;
        }
      });
      if (toAdd.length > 0) {
        await this.queue.addBulk(
          toAdd.map((entry) => ({
            name: jobName(sweep.name, entry.trials ?? 1),
            data: entry.payload,
            opts: jobOptions(jobIdFor(sweep.hash, entry.key)),
          })),
        );
      }
      return { added, present: presentCount, failedKept, retried };
    });
  }

  /**
   * Every job id of one sweep in one state, page by page, through BullMQ's
   * getRanges. A set that changes while it is read may show an id twice or
   * miss one that moved: callers de-duplicate, and counts are a snapshot.
   */
  private async *sweepIds(sweepHash: string, state: JobType): AsyncGenerator<string[]> {
    const prefix = jobIdPrefix(sweepHash);
    for (let start = 0; ; start += SCAN_PAGE) {
      const page = await this.queue.getRanges([state], start, start + SCAN_PAGE - 1);
      const ours = page.filter((id) => id.startsWith(prefix));
      if (ours.length > 0) yield ours;
      if (page.length < SCAN_PAGE) return;
    }
  }

  /** Distinct ids of the sweep over several states. */
  private async collectIds(sweepHash: string, states: readonly JobType[]): Promise<Set<string>> {
    const ids = new Set<string>();
    for (const state of states) {
      for await (const page of this.sweepIds(sweepHash, state)) for (const id of page) ids.add(id);
    }
    return ids;
  }

  counts(sweepHash: string): Promise<SweepQueueCounts> {
    return this.guard(async () => ({
      waiting: await this.trialsOf(sweepHash, await this.collectIds(sweepHash, WAITING_STATES)),
      active: await this.trialsOf(sweepHash, await this.collectIds(sweepHash, ['active'])),
      delayed: await this.trialsOf(sweepHash, await this.collectIds(sweepHash, ['delayed'])),
      failed: await this.trialsOf(sweepHash, await this.collectIds(sweepHash, ['failed'])),
    }));
  }

  /** Trials per job id, from the jobs' names (one pipelined HGET per page). */
  private async trialsByName(ids: readonly string[]): Promise<number[]> {
    const trials: number[] = [];
    for (let i = 0; i < ids.length; i += SCAN_PAGE) {
      const page = ids.slice(i, i + SCAN_PAGE);
      const names = await replies(
        this.client.pipeline(page.map((id) => ['hget', jobRedisKey(this.target, id), 'name'])),
      );
      for (const name of names) trials.push(trialsOfJobName(name));
    }
    return trials;
  }

  /** Total trials of these jobs. */
  private async trialsOf(_sweepHash: string, ids: ReadonlySet<string>): Promise<number> {
    let total = 0;
    for (const n of await this.trialsByName([...ids])) total += n;
    return total;
  }

  async *finishedJobs(sweepHash: string): AsyncGenerator<FinishedJob[]> {
    const prefix = jobIdPrefix(sweepHash);
    const completedKey = stateRedisKey(this.target, 'completed');
    // The completed set's scores are the finish times. Read directly: BullMQ's getJobs
    // returns whole jobs (payload and record) and took 6.0 s for 20,000 where ZRANGE
    // WITHSCORES took 0.2 s.
    for (let start = 0; ; start += SCAN_PAGE) {
      const page = await this.guard(() =>
        this.client.zrange(completedKey, start, String(start + SCAN_PAGE - 1), 'WITHSCORES'),
      );
      const ours: { id: string; key: string; finishedAt: number }[] = [];
      for (let i = 0; i + 1 < page.length; i += 2) {
        const id = page[i] as string;
        if (!id.startsWith(prefix)) continue;
        const key = keyOfJobId(id);
        if (key !== undefined) ours.push({ id, key, finishedAt: Number(page[i + 1]) });
      }
      const trials = await this.guard(() => this.trialsByName(ours.map((job) => job.id)));
      const finished: FinishedJob[] = ours.map((job, i) => ({
        key: job.key,
        trials: trials[i] ?? 1,
        finishedAt: job.finishedAt,
      }));
      if (finished.length > 0) yield finished;
      if (page.length < 2 * SCAN_PAGE) return;
    }
  }

  finishedValues(sweepHash: string, keys: readonly string[]): Promise<FinishedValue[]> {
    return this.guard(async () => {
      // Payload and return value only: BullMQ's getJob reads the whole job hash,
      // 3.3 s for 20,000 jobs against 1.1 s for a pipelined HGET.
      const pipeline = this.client.pipeline();
      for (const key of keys) pipeline.hmget(jobRedisKey(this.target, jobIdFor(sweepHash, key)), 'data', 'returnvalue');
      const raw = await replies(pipeline);
      const parse = (text: unknown): unknown => {
        if (typeof text !== 'string') return undefined;
        try {
          return JSON.parse(text);
        } catch {
          return undefined;
        }
      };
      const values: FinishedValue[] = [];
      keys.forEach((key, i) => {
        const [data, value] = (raw[i] ?? [null, null]) as [unknown, unknown];
        // Removed since it was listed (another gather): nothing to do.
        if (value === null || value === undefined) return;
        values.push({ key, data: parse(data), value: parse(value) });
      });
      return values;
    });
  }

  removeFinished(sweepHash: string, keys: readonly string[]): Promise<number> {
    return this.guard(() => this.removeIds(keys.map((key) => jobIdFor(sweepHash, key))));
  }

  cancel(sweepHash: string): Promise<number> {
    return this.guard(async () => {
      const client = this.client as Redis & Partial<CancelCommand>;
      if (client.recallscapeCancelPage === undefined) {
        client.defineCommand('recallscapeCancelPage', { numberOfKeys: 1, lua: CANCEL_PAGE_SCRIPT });
      }
      const run = (client as Redis & CancelCommand).recallscapeCancelPage.bind(client);
      const prefix = jobIdPrefix(sweepHash);
      const base = `${this.target.prefix}:${this.target.name}:`;
      const marker = `recallscape:cancelled:${randomBytes(8).toString('hex')}`;
      // Not started: waiting (or waiting in a paused queue), prioritized, or delayed for a retry.
      // No job of ours has children, so 'waiting-children' holds none.
      const states = [
        ['wait', 'list'],
        ['paused', 'list'],
        ['prioritized', 'zset'],
        ['delayed', 'zset'],
      ] as const;
      let total = 0;
      for (let pass = 0; pass < CANCEL_PASSES; pass++) {
        let removedInPass = 0;
        for (const [state, kind] of states) {
          const key = stateRedisKey(this.target, state);
          // Entries of other sweeps stay, so the next page starts after the ones passed over.
          for (let start = 0; ; ) {
            const [removed, others, seen, trials] = await run(key, kind, base, prefix, start, CANCEL_PAGE, marker);
            removedInPass += removed;
            total += trials;
            start += others;
            if (seen < CANCEL_PAGE) break;
          }
        }
        // Jobs added meanwhile shift the pages; another pass finds what the shift hid.
        if (removedInPass === 0) break;
      }
      return total;
    });
  }

  batchSize(sweepHash: string, proposed: number, force: boolean): Promise<number> {
    return this.guard(async () => {
      const key = batchSizeRedisKey(this.target, sweepHash);
      if (force) {
        await this.client.set(key, String(proposed));
        return proposed;
      }
      // SET NX: of two submits at once, the first one's size holds for both.
      await this.client.set(key, String(proposed), 'NX');
      const agreed = Number(await this.client.get(key));
      return Number.isSafeInteger(agreed) && agreed >= 1 ? agreed : proposed;
    });
  }

  agreedBatchSize(sweepHash: string): Promise<number | undefined> {
    return this.guard(async () => {
      const agreed = Number(await this.client.get(batchSizeRedisKey(this.target, sweepHash)));
      return Number.isSafeInteger(agreed) && agreed >= 1 ? agreed : undefined;
    });
  }

  /** Remove jobs by id, a few hundred requests in flight at a time; returns how many were removed. */
  private async removeIds(ids: readonly string[]): Promise<number> {
    let removed = 0;
    for (let i = 0; i < ids.length; i += REMOVE_BATCH) {
      const results = await Promise.all(ids.slice(i, i + REMOVE_BATCH).map((id) => this.queue.remove(id)));
      removed += results.filter((r) => r === 1).length;
    }
    return removed;
  }

  async close(): Promise<void> {
    try {
      await this.queue.close();
    } catch {
      // The connection is already gone: nothing to flush.
    }
    await closeRedis(this.client);
  }
}
