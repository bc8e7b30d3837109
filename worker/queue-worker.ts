import { readFile } from 'node:fs/promises';
import { join, resolve, sep } from 'node:path';
import { isErrorOf } from '../shared/errors.js';
import { looksLikeBatch, unpackBatch } from '../shared/queue/batch-payload.js';
import { packResults } from '../shared/queue/batch-result.js';
import type { ConsumedJob, JobHandler, JobVerdict, WorkConsumer } from '../shared/queue/work-consumer.js';
import { JobPayloadSchema } from '../shared/schemas/records.js';
import type { JobRunner } from './job-runner.js';
import { PoolBroken, PoolUnavailable } from './pool-errors.js';
import type { ShardSinks } from './shard-sinks.js';

/** With prefetch 'auto': hold extra jobs while the mean job takes less than this. */
export const AUTO_PREFETCH_BELOW_MS = 100;
/** With prefetch 'auto': extra jobs held per thread while jobs are short. */
export const AUTO_PREFETCH_PER_THREAD = 4;
/** A sweep folder found not shared is looked at again after this long (submit may write sweep.json later). */
export const SHARED_DISK_RECHECK_MS = 30_000;
/** Most jobs held beyond threads and prefetch for records waiting on a sync (tiny jobs on a slow disk). */
export const MAX_SYNC_ALLOWANCE = 512;

export interface QueueWorkerOptions {
  readonly runner: JobRunner;
  /** Results root: a job of sweep S writes to `<root>/<S>/results/<writer>.ndjson`. */
  readonly resultsRoot: string;
  /**
   * Jobs taken beyond one per thread, waiting in this process for a free
   * thread. Hides the queue's round trip behind the previous job (worth it for
   * jobs of milliseconds); with long jobs it lets idle workers wait at the end.
   * 'auto' (the default) prefetches only while recent jobs are short.
   */
  readonly prefetch?: number | 'auto';
  /**
   * The runner's shard sinks. Jobs whose record waits for a group commit
   * still hold their queue lock (they are acknowledged after the sync), so
   * while it prefetches, the worker holds extra jobs for them, sized from how
   * many waited at once recently: the threads then never wait for a sync.
   */
  readonly sinks?: ShardSinks;
  /** The pool can run nothing (e.g. threads fail to load): the worker should stop rather than fail every job. */
  readonly onFatal?: (reason: string) => void;
}

/**
 * A worker's job handler for jobs of every sweep: checks the one payload
 * field used for a path, runs the job through the job runner (the record is
 * on disk, covered by a group commit, before the verdict), and answers with a
 * verdict. The record is also the job's return value, for coordinators that
 * share no disk with this machine.
 */
export class QueueWorker {
  private readonly root: string;
  private consumer: WorkConsumer | undefined;
  /** Moving mean of recent jobs' simulation time (ms), for prefetch 'auto'. */
  private meanJobMs: number | undefined;
  /** Jobs held for records waiting on a sync, beyond threads and prefetch. */
  private syncAllowance: number;
  /** Most jobs seen waiting for a sync at once since the last sync ended. */
  private peakAwaiting = 0;
  /** Per sweep folder and hash: shared with the coordinator (true), or not as of a time (ms). */
  private readonly shared = new Map<string, true | number>();

  constructor(private readonly options: QueueWorkerOptions) {
    this.root = resolve(options.resultsRoot);
    // A first guess; the first syncs correct it.
    this.syncAllowance = options.sinks === undefined ? 0 : options.runner.threads;
  }

  /** Jobs to hold at the start: one per thread, a fixed prefetch ('auto' starts without extra jobs), the sync allowance. */
  get initialConcurrency(): number {
    const prefetch = this.options.prefetch;
    return this.options.runner.threads + this.withAllowance(typeof prefetch === 'number' ? prefetch : 0);
  }

  /**
   * Extra jobs beyond one per thread: the prefetch, plus the sync allowance
   * while anything is prefetched at all. Without prefetch (long jobs, or
   * `--prefetch 0`) a thread may wait for one sync per job, a few ms against
   * a job of 0.1 s or more, and no job waits in this process behind a
   * running one while other workers may be idle.
   */
  private withAllowance(prefetch: number): number {
    return prefetch > 0 ? prefetch + this.syncAllowance : 0;
  }

  /** The consumer whose concurrency the worker adjusts (prefetch 'auto', sync allowance). */
  attach(consumer: WorkConsumer): void {
    this.consumer = consumer;
    let before = this.options.sinks?.awaiting ?? 0;
    this.options.sinks?.onAwaitingChange((awaiting) => {
      const ended = awaiting < before;
      before = awaiting;
      this.peakAwaiting = Math.max(this.peakAwaiting, awaiting);
      if (ended) this.adaptSyncAllowance(awaiting);
    });
  }

  /**
   * After a sync: allow twice the most jobs that waited at once, so a burst
   * larger than the last one still leaves the threads fed; when every held
   * job ended up waiting (the threads starved), this doubles the allowance
   * each sync until they no longer do. Shrinks slowly, as syncs vary.
   */
  private adaptSyncAllowance(awaiting: number): void {
    const wanted = Math.max(this.options.runner.threads, 2 * this.peakAwaiting, Math.floor(0.9 * this.syncAllowance));
    this.syncAllowance = Math.min(MAX_SYNC_ALLOWANCE, wanted);
    this.peakAwaiting = awaiting;
    this.updateConcurrency();
  }

  private updateConcurrency(): void {
    if (this.consumer === undefined) return;
    const threads = this.options.runner.threads;
    const prefetch = this.options.prefetch ?? 'auto';
    const extra =
      prefetch !== 'auto'
        ? prefetch
        : this.meanJobMs !== undefined && this.meanJobMs < AUTO_PREFETCH_BELOW_MS
          ? AUTO_PREFETCH_PER_THREAD * threads
          : 0;
    this.consumer.concurrency = threads + this.withAllowance(extra);
  }

  readonly handle: JobHandler = async (job: ConsumedJob): Promise<JobVerdict> => {
    if (job.unreadable !== undefined) {
      return { kind: 'failed', reason: `invalid: invalid job payload: ${job.unreadable}`, retry: false };
    }
    // The payload is untrusted: check the one field used for a path before anything else.
    const folder = this.sweepFolderOf(job.data);
    if (folder === undefined) {
      const parsed = JobPayloadSchema.safeParse(job.data);
      const detail = parsed.success
        ? 'payload.sweep.name: must name a folder inside the results root'
        : parsed.error.issues
            .slice(0, 5)
            .map((i) => `payload.${i.path.map(String).join('.')}: ${i.message}`)
            .join('; ');
      return { kind: 'failed', reason: `invalid: invalid job payload: ${detail}`, retry: false };
    }
    if (looksLikeBatch(job.data)) return this.handleBatch(job, folder);
    let result: Awaited<ReturnType<JobRunner['execute']>>;
    try {
      result = await this.options.runner.execute({ payload: job.data, folder, attempt: job.attempt });
    } catch (error) {
      // The pool is shutting down or broken: the job never ran here.
      if (!isErrorOf(error, PoolUnavailable)) throw error;
      if (isErrorOf(error, PoolBroken)) this.options.onFatal?.(error.message);
      return { kind: 'handed-back', reason: error.message };
    }
    if (result.ok) {
      this.adaptPrefetch(result.record.elapsedMs);
      return { kind: 'done', value: result.record };
    }
    return { kind: 'failed', reason: `${result.kind}: ${result.message}`, retry: result.retryable };
  };

  /**
   * A queue job of several trials: each trial is checked (key from its
   * parameters and replicate, seed from its key), run and recorded as a job
   * of its own, and the batch's verdict follows its worst trial. All done:
   * the records, packed, are the return value. A trial that may succeed on
   * another try (exception, crash): the batch is retried whole, and the
   * trials that did finish are run again; their records are equal and the
   * store reads one per key. A trial that can never run (invalid,
   * unsupported) or ran over its time limit (it would again, see
   * shared/job-time-limit.ts): the batch fails for good, every trial but
   * those recorded.
   */
  private async handleBatch(job: ConsumedJob, folder: string): Promise<JobVerdict> {
    const batch = unpackBatch(job.data);
    if (!batch.ok) return { kind: 'failed', reason: `invalid: ${batch.message}`, retry: false };
    let results: Awaited<ReturnType<JobRunner['executeBatch']>>;
    try {
      results = await this.options.runner.executeBatch(folder, batch.trials, job.attempt);
    } catch (error) {
      if (!isErrorOf(error, PoolUnavailable)) throw error;
      if (isErrorOf(error, PoolBroken)) this.options.onFatal?.(error.message);
      return { kind: 'handed-back', reason: error.message };
    }
    const records = [];
    const failures = [];
    let elapsedMs = 0;
    for (const result of results) {
      if (result.ok) {
        records.push(result.record);
        elapsedMs += result.record.elapsedMs;
      } else {
        failures.push(result);
      }
    }
    if (failures.length === 0) {
      this.adaptPrefetch(elapsedMs);
      const hash = (job.data as { sweep: { hash: string } }).sweep.hash;
      // On the coordinator's disk the records need not travel: a count says what the job did, and it leaves Redis.
      if (await this.sharesDisk(folder, hash)) return { kind: 'done', value: packResults([]), leave: true };
      return { kind: 'done', value: packResults(records) };
    }
    const first = failures[0] as (typeof failures)[number];
    const retry = failures.some((f) => f.retryable);
    return {
      kind: 'failed',
      reason: `${first.kind}: ${failures.length} of ${results.length} trials failed; first: ${first.message}`,
      retry,
    };
  }

  /**
   * Prefetch 'auto': hold extra jobs while jobs are short (the queue's round
   * trip is then a large share of each job), none once they are long (a held
   * job would wait behind a running one while other workers may be idle).
   * Uses the time inside the thread, not the wait for a thread, so holding
   * jobs does not itself switch holding off.
   */
  private adaptPrefetch(jobMs: number): void {
    if (this.options.prefetch !== undefined && this.options.prefetch !== 'auto') return;
    this.meanJobMs = this.meanJobMs === undefined ? jobMs : 0.8 * this.meanJobMs + 0.2 * jobMs;
    this.updateConcurrency();
  }

  /**
   * Whether this worker writes where the coordinator reads: `submit` writes
   * sweep.json into the sweep's folder under its --out, so a worker that finds
   * that file, with the job's sweep hash, under its own --out shares the disk
   * (docs/operations.md: a shared disk means the same --out). A worker with
   * its own disk never has it (workers do not write sweep.json).
   */
  private async sharesDisk(folder: string, hash: string): Promise<boolean> {
    const id = `${folder}/${hash}`;
    const known = this.shared.get(id);
    if (known === true) return true;
    if (known !== undefined && Date.now() - known < SHARED_DISK_RECHECK_MS) return false;
    let stored: unknown;
    try {
      stored = JSON.parse(await readFile(join(this.root, folder, 'sweep.json'), 'utf8'));
    } catch {
      stored = undefined;
    }
    const shares = (stored as { hash?: unknown } | undefined)?.hash === hash;
    this.shared.set(id, shares ? true : Date.now());
    return shares;
  }

  /** The payload's sweep name when it is a plain folder name, else undefined. */
  private sweepFolderOf(data: unknown): string | undefined {
    const sweep = JobPayloadSchema.shape.sweep.safeParse((data as { sweep?: unknown } | null)?.sweep);
    if (!sweep.success) return undefined;
    const name = sweep.data.name;
    const folder = resolve(this.root, name);
    // Belt and braces over the schema's pattern: exactly one level below the root.
    if (name === '.' || !folder.startsWith(this.root + sep) || folder.slice(this.root.length + 1).includes(sep))
      return undefined;
    return name;
  }
}
