import { resolve, sep } from 'node:path';
import { type Job, UnrecoverableError, WaitingError, Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import type { Logger } from '../shared/logger.js';
import type { QueueTarget } from '../shared/queue-names.js';
import { type FailureRecord, JobPayloadSchema, type ResultRecord } from '../shared/schemas/records.js';
import { ResultStore, type ShardWriter } from '../shared/store/result-store.js';
import type { JobOutcome } from './run-job.js';
import type { ThreadPool } from './thread-pool.js';

/**
 * Lock and stall timing. A killed worker's job is found again after its lock
 * expires (at most `lockMs` after the last renewal, renewals every lockMs/2)
 * plus one stall check: with these defaults within about 15 s.
 */
export const DEFAULT_LOCK_MS = 10_000;
export const DEFAULT_STALL_CHECK_MS = 5_000;
/** Stalls (lost locks) a job may survive before it is failed; a second crash is tolerated. */
export const DEFAULT_MAX_STALLED = 2;

export interface QueueConsumerOptions {
  /** A ready ioredis client with `maxRetriesPerRequest: null` (BullMQ duplicates it for blocking reads). */
  readonly connection: Redis;
  readonly queue: QueueTarget;
  /** Runs the simulations; one BullMQ slot per thread. */
  readonly pool: ThreadPool;
  /** Results root: a job of sweep S writes to `<root>/<S>/results/<writer>.ndjson`. */
  readonly resultsRoot: string;
  readonly writer: string;
  /** This invocation of the worker, written into failure records (as the pool writes it into results). */
  readonly run: string;
  /**
   * Jobs taken beyond one per thread, waiting in this process for a free
   * thread. Hides the Redis round trip behind the previous job (worth it for
   * jobs of milliseconds); with long jobs it lets idle workers wait at the end.
   * 'auto' (the default) prefetches only while recent jobs are short.
   */
  readonly prefetch?: number | 'auto';
  readonly lockMs?: number;
  readonly stallCheckMs?: number;
  readonly maxStalledCount?: number;
  readonly logger: Logger;
  /** The pool can run nothing (e.g. threads fail to load): the worker should stop rather than fail every job. */
  readonly onFatal?: (reason: string) => void;
}

/** With prefetch 'auto': hold extra jobs while the mean job takes less than this. */
export const AUTO_PREFETCH_BELOW_MS = 100;
/** With prefetch 'auto': extra jobs held per thread while jobs are short. */
export const AUTO_PREFETCH_PER_THREAD = 4;

export interface ConsumerCounts {
  completed: number;
  failed: number;
}

/**
 * Serves jobs of every sweep from one BullMQ queue. The simulation runs in
 * the thread pool, so this thread stays free to renew job locks; the record
 * is on disk (fdatasync) before the job is acknowledged, and it is also the
 * job's return value, for coordinators that share no disk with this machine.
 */
export class QueueConsumer {
  readonly counts: ConsumerCounts = { completed: 0, failed: 0 };
  private readonly worker: Worker;
  private readonly writers = new Map<string, ShardWriter>();
  private readonly pendingSyncs = new Map<ShardWriter, Promise<void>>();
  private readonly root: string;
  /** Moving mean of recent jobs' simulation time (ms), for prefetch 'auto'. */
  private meanJobMs: number | undefined;

  constructor(private readonly options: QueueConsumerOptions) {
    this.root = resolve(options.resultsRoot);
    this.worker = new Worker(options.queue.name, (job, token) => this.process(job, token), {
      connection: options.connection,
      prefix: options.queue.prefix,
      // 'auto' starts without extra jobs, so long jobs are never held back.
      concurrency: options.pool.threads + (typeof options.prefetch === 'number' ? options.prefetch : 0),
      lockDuration: options.lockMs ?? DEFAULT_LOCK_MS,
      stalledInterval: options.stallCheckMs ?? DEFAULT_STALL_CHECK_MS,
      maxStalledCount: options.maxStalledCount ?? DEFAULT_MAX_STALLED,
      autorun: false,
    });
    const log = options.logger;
    this.worker.on('completed', (job) => {
      this.counts.completed++;
      log.debug({ job: job.id }, 'job done');
    });
    this.worker.on('failed', (job, error) => {
      this.counts.failed++;
      log.warn({ job: job?.id, attempt: job?.attemptsMade, reason: error.message.slice(0, 500) }, 'job failed');
    });
    this.worker.on('stalled', (jobId) => log.warn({ job: jobId }, 'a job lost its worker and goes back to the queue'));
    // During a Redis outage every reconnect attempt reports an error: one line per reason every 30 s.
    const lastSaid = new Map<string, number>();
    this.worker.on('error', (error) => {
      const reason = error.message.slice(0, 500);
      const now = Date.now();
      if (now - (lastSaid.get(reason) ?? 0) < 30_000) return;
      lastSaid.set(reason, now);
      log.warn({ reason }, 'queue worker trouble');
    });
  }

  /** Start taking jobs; resolves once connected (the loop itself runs until close). */
  async start(): Promise<void> {
    void this.worker.run().catch((error: unknown) => {
      this.options.logger.error(
        { reason: error instanceof Error ? error.message : String(error) },
        'queue worker stopped',
      );
    });
    await this.worker.waitUntilReady();
  }

  /** Jobs this worker takes at once right now (threads plus prefetched jobs). */
  get concurrency(): number {
    return this.worker.concurrency;
  }

  /** Stop taking jobs, let running ones finish and be acknowledged, close shards. */
  async close(): Promise<void> {
    await this.worker.close();
    this.closeWriters();
  }

  private closeWriters(): void {
    for (const writer of this.writers.values()) {
      try {
        writer.close();
      } catch {
        // Closing a shard that failed earlier: nothing left to save.
      }
    }
    this.writers.clear();
  }

  private async process(job: Job, token: string | undefined): Promise<ResultRecord> {
    this.options.logger.debug({ job: job.id, attempt: job.attemptsMade + 1 }, 'job started');
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
      throw new UnrecoverableError(`invalid: invalid job payload: ${detail}`);
    }
    let outcome: JobOutcome;
    try {
      outcome = await this.options.pool.run(job.data);
    } catch (error) {
      // The pool is shutting down or broken: the job never ran here. Hand it
      // back to the queue without using one of its attempts, so a worker in a
      // crash loop cannot exhaust other jobs' retries.
      const message = error instanceof Error ? error.message : String(error);
      if (error instanceof Error && error.name === 'PoolBroken') this.options.onFatal?.(message);
      await job.moveToWait(token);
      throw new WaitingError(`not run here (${message}); back in the queue`);
    }
    if (outcome.ok) {
      const writer = this.writerFor(folder);
      writer.appendResult(outcome.record);
      await this.durable(writer);
      this.adaptPrefetch(outcome.record.elapsedMs);
      return outcome.record;
    }
    const reason = `${outcome.kind}: ${outcome.message}`;
    if (outcome.payload !== undefined) {
      const payload = outcome.payload;
      const failure: FailureRecord = {
        v: 1,
        key: payload.key,
        sweepHash: payload.sweep.hash,
        kind: outcome.kind,
        message: outcome.message.slice(0, 2_000),
        point: payload.point,
        replicate: payload.replicate,
        writer: this.options.writer,
        run: this.options.run,
        at: new Date().toISOString(),
        attempt: job.attemptsMade + 1,
      };
      const writer = this.writerFor(folder);
      writer.appendFailure(failure);
      await this.durable(writer);
    }
    if (!outcome.retryable) throw new UnrecoverableError(reason);
    throw new Error(reason);
  }

  /**
   * Prefetch 'auto': hold extra jobs while jobs are short (the Redis round
   * trip is then a large share of each job), none once they are long (a held
   * job would wait behind a running one while other workers may be idle).
   * Uses the time inside the thread, not the wait for a thread, so holding
   * jobs does not itself switch holding off.
   */
  private adaptPrefetch(jobMs: number): void {
    if (this.options.prefetch !== undefined && this.options.prefetch !== 'auto') return;
    this.meanJobMs = this.meanJobMs === undefined ? jobMs : 0.8 * this.meanJobMs + 0.2 * jobMs;
    const threads = this.options.pool.threads;
    const wanted = threads + (this.meanJobMs < AUTO_PREFETCH_BELOW_MS ? AUTO_PREFETCH_PER_THREAD * threads : 0);
    if (this.worker.concurrency !== wanted) this.worker.concurrency = wanted;
  }

  /**
   * Resolves once everything appended so far is on disk. Jobs that finish in
   * the same turn of the event loop (several threads) share one fdatasync.
   */
  private durable(writer: ShardWriter): Promise<void> {
    let pending = this.pendingSyncs.get(writer);
    if (pending === undefined) {
      pending = new Promise<void>((done, fail) => {
        setImmediate(() => {
          this.pendingSyncs.delete(writer);
          try {
            writer.sync();
            done();
          } catch (error) {
            fail(error instanceof Error ? error : new Error(String(error)));
          }
        });
      });
      this.pendingSyncs.set(writer, pending);
    }
    return pending;
  }

  /** `<root>/<name>` when the payload's sweep name is a plain folder name, else undefined. */
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

  private writerFor(name: string): ShardWriter {
    let writer = this.writers.get(name);
    if (writer === undefined) {
      writer = ResultStore.at(this.options.resultsRoot, name).openWriter(this.options.writer);
      this.writers.set(name, writer);
    }
    return writer;
  }
}
