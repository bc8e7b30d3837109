import { type Job, type JobJson, UnrecoverableError, WaitingError, Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import { MAX_PAYLOAD_CHARS } from '../job-policy.js';
import type { QueueTarget } from '../queue-target.js';
import type { ConsumerCounts, ConsumerOptions, JobHandler, WorkConsumer } from '../work-consumer.js';
import { closeRedis } from './redis-connect.js';

/** Same reason of trouble logged at most once per this many ms (a Redis outage reports every reconnect). */
const TROUBLE_EVERY_MS = 30_000;

/**
 * How long a job waits when it arrives while an earlier copy of it (same id)
 * still runs here, before it is offered again.
 */
export const SAME_ID_DELAY_MS = 500;

/** Why a job's stored data could not be read, by job (set while the job is built, read when it runs). */
const unreadableJobs = new WeakMap<Job, string>();

/**
 * BullMQ's worker, with one change: a job whose stored data is not JSON, or
 * is larger than a payload may be, is still built (with null data) instead
 * of throwing inside BullMQ's fetch loop. Left to BullMQ, such a job is taken,
 * throws before any handler sees it, loses its lock and goes back to waiting,
 * forever; built this way it reaches the handler, which fails it for good.
 */
class TolerantWorker extends Worker {
  /** Told when a job waits for an earlier copy of itself (for the consumer's log). */
  onSecondCopy: (id: string) => void = () => undefined;
  /** Ids of the jobs whose processing (handler, then BullMQ's own finish and lock bookkeeping) has not ended. */
  private readonly processing = new Set<string>();

  override async processJob(job: Job, token: string, fetchNextCallback?: () => boolean): Promise<void | Job> {
    const id = job.id ?? '';
    if (this.processing.has(id)) {
      // A second copy of a job that still runs here: the queue lost the first (Redis lost its data and
      // the job was queued again under its fixed id, or the first stalled). BullMQ renews locks by job id,
      // so handing this copy to BullMQ would replace the first copy's entry, and the first copy's end
      // would stop this one's renewals: it would stall again and again and fail for good. It waits
      // until the first has ended, without using an attempt, and never enters BullMQ's bookkeeping here.
      try {
        await job.moveToDelayed(Date.now() + SAME_ID_DELAY_MS, token);
        this.onSecondCopy(id);
      } catch (error) {
        // Its lock is already gone (another worker's stall check): nothing of it is held here.
        this.emit('error', error instanceof Error ? error : new Error(String(error)));
      }
      return;
    }
    this.processing.add(id);
    try {
      return await super.processJob(job, token, fetchNextCallback);
    } finally {
      // Only now has BullMQ stopped renewing this id's lock: a copy taken from here on is safe.
      this.processing.delete(id);
    }
  }

  protected override createJob(json: JobJson, jobId: string): Job {
    const text = json.data;
    let problem: string | undefined;
    if (typeof text === 'string' && text.length > MAX_PAYLOAD_CHARS) {
      // Refused unread: parsing hundreds of megabytes would stall this thread, which also keeps the locks alive.
      problem = `the payload is ${text.length} characters of JSON, more than the ${MAX_PAYLOAD_CHARS} a job may have; not read`;
    } else {
      try {
        return super.createJob(json, jobId);
      } catch (error) {
        problem = `the payload is not JSON (${error instanceof Error ? error.message.slice(0, 200) : String(error)})`;
      }
    }
    const job = super.createJob({ ...json, data: 'null' }, jobId);
    unreadableJobs.set(job, problem);
    return job;
  }
}

/**
 * A worker's side of a BullMQ queue: takes jobs, keeps their locks alive
 * from this (main) thread while the handler runs them elsewhere, and turns
 * each verdict into BullMQ's terms (return value, failure with or without
 * retries, or back to waiting untouched).
 */
export class BullmqConsumer implements WorkConsumer {
  readonly counts: ConsumerCounts = { completed: 0, failed: 0 };
  private readonly worker: TolerantWorker;

  /** Over a connected client (`maxRetriesPerRequest: null`), which the consumer then owns. */
  constructor(
    private readonly connection: Redis,
    target: QueueTarget,
    private readonly handler: JobHandler,
    private readonly options: ConsumerOptions,
  ) {
    this.worker = new TolerantWorker(target.name, (job, token) => this.process(job, token), {
      connection,
      prefix: target.prefix,
      concurrency: options.concurrency,
      lockDuration: options.lockMs,
      stalledInterval: options.stallCheckMs,
      maxStalledCount: options.maxStalledCount,
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
    const lastSaid = new Map<string, number>();
    this.worker.on('error', (error) => {
      const reason = error.message.slice(0, 500);
      const now = Date.now();
      if (now - (lastSaid.get(reason) ?? 0) < TROUBLE_EVERY_MS) return;
      lastSaid.set(reason, now);
      log.warn({ reason }, 'queue worker trouble');
    });
    // Said once per TROUBLE_EVERY_MS per job: a copy is offered again every SAME_ID_DELAY_MS while it waits.
    const copySaid = new Map<string, number>();
    this.worker.onSecondCopy = (id) => {
      const now = Date.now();
      if (now - (copySaid.get(id) ?? 0) < TROUBLE_EVERY_MS) return;
      if (copySaid.size > 1000) copySaid.clear();
      copySaid.set(id, now);
      log.warn({ job: id }, 'an earlier copy of this job still runs here; it waits for it');
    };
  }

  get concurrency(): number {
    return this.worker.concurrency;
  }

  set concurrency(value: number) {
    if (this.worker.concurrency !== value) this.worker.concurrency = value;
  }

  async start(): Promise<void> {
    void this.worker.run().catch((error: unknown) => {
      this.options.logger.error(
        { reason: error instanceof Error ? error.message : String(error) },
        'queue worker stopped',
      );
    });
    await this.worker.waitUntilReady();
  }

  async close(): Promise<void> {
    await this.worker.close();
    await closeRedis(this.connection);
  }

  private async process(job: Job, token: string | undefined): Promise<unknown> {
    const id = job.id ?? '';
    const attempt = job.attemptsMade + 1;
    this.options.logger.debug({ job: id, attempt }, 'job started');
    const verdict = await this.handler({
      id,
      data: job.data,
      unreadable: unreadableJobs.get(job),
      attempt,
    });
    switch (verdict.kind) {
      case 'done':
        // Read by BullMQ as it moves the job to completed: removed in the same script.
        if (verdict.leave === true) job.opts.removeOnComplete = true;
        return verdict.value;
      case 'failed':
        throw verdict.retry ? new Error(verdict.reason) : new UnrecoverableError(verdict.reason);
      case 'handed-back':
        // Back to waiting without using one of its attempts, so a worker that
        // cannot run anything does not exhaust other jobs' retries.
        await job.moveToWait(token);
        throw new WaitingError(`not run here (${verdict.reason}); back in the queue`);
    }
  }
}
