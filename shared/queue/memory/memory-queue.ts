import { JOB_ATTEMPTS } from '../job-policy.js';
import type { ConsumerCounts, JobHandler, JobVerdict, WorkConsumer } from '../work-consumer.js';
import type {
  AddOptions,
  AddResult,
  FinishedJob,
  FinishedValue,
  QueueEntry,
  SweepQueueCounts,
  WorkQueue,
} from '../work-queue.js';

export type MemoryJobState = 'waiting' | 'active' | 'completed' | 'failed';

/** One job as the in-memory queue holds it (read-only copies are handed out). */
export interface MemoryJob {
  readonly id: string;
  readonly sweepHash: string;
  readonly key: string;
  /** Trials the job carries. */
  readonly trials: number;
  readonly data: unknown;
  state: MemoryJobState;
  attemptsMade: number;
  finishedAt: number | undefined;
  value: unknown;
  failedReason: string | undefined;
}

const PAGE = 1_000;

/**
 * A queue in this process's memory with the semantics the coordinator and
 * the worker rely on (exact add counts, cancel that leaves started jobs,
 * bounded attempts, jobs handed back without using an attempt). The
 * coordinator's logic is tested against it; it is also a reference for a new
 * backend. Retries go straight back to waiting (no backoff).
 */
export class MemoryQueue implements WorkQueue {
  private readonly jobs = new Map<string, MemoryJob>();
  private waiting: string[] = [];
  private readonly consumers = new Set<MemoryConsumer>();
  private readonly batchSizes = new Map<string, number>();
  private clock = 0;

  private static id(sweepHash: string, key: string): string {
    return `${sweepHash.slice(0, 16)}-${key}`;
  }

  /** A job by sweep and key, or undefined. */
  job(sweepHash: string, key: string): Readonly<MemoryJob> | undefined {
    return this.jobs.get(MemoryQueue.id(sweepHash, key));
  }

  /** Every job, in insertion order. */
  all(): ReadonlyArray<Readonly<MemoryJob>> {
    return [...this.jobs.values()];
  }

  async add(
    sweep: { readonly hash: string; readonly name: string },
    entries: readonly QueueEntry[],
    options: AddOptions,
  ): Promise<AddResult> {
    let added = 0;
    let present = 0;
    let failedKept = 0;
    let retried = 0;
    for (const entry of entries) {
      const id = MemoryQueue.id(sweep.hash, entry.key);
      const existing = this.jobs.get(id);
      if (existing === undefined) {
        this.put(id, sweep.hash, entry.key, entry.trials ?? 1, entry.payload);
        added += entry.trials ?? 1;
      } else if (existing.state === 'failed' && options.retryFailed) {
        this.jobs.delete(id);
        this.put(id, sweep.hash, entry.key, entry.trials ?? 1, entry.payload);
        retried += entry.trials ?? 1;
      } else if (existing.state === 'failed') {
        failedKept += entry.trials ?? 1;
      } else {
        present += entry.trials ?? 1;
      }
    }
    this.wake();
    return { added, present, failedKept, retried };
  }

  /** Put any data in the queue under any id, as a hostile writer could. */
  addRaw(id: string, data: unknown): void {
    this.put(id, '', '', 1, data);
    this.wake();
  }

  private put(id: string, sweepHash: string, key: string, trials: number, data: unknown): void {
    this.jobs.set(id, {
      id,
      sweepHash,
      key,
      trials,
      data,
      state: 'waiting',
      attemptsMade: 0,
      finishedAt: undefined,
      value: undefined,
      failedReason: undefined,
    });
    this.waiting.push(id);
  }

  private ofSweep(sweepHash: string): MemoryJob[] {
    return [...this.jobs.values()].filter((j) => j.sweepHash === sweepHash);
  }

  async counts(sweepHash: string): Promise<SweepQueueCounts> {
    const jobs = this.ofSweep(sweepHash);
    const count = (state: MemoryJobState): number =>
      jobs.filter((j) => j.state === state).reduce((sum, j) => sum + j.trials, 0);
    return { waiting: count('waiting'), active: count('active'), delayed: 0, failed: count('failed') };
  }

  async *finishedJobs(sweepHash: string): AsyncGenerator<FinishedJob[]> {
    const done = this.ofSweep(sweepHash)
      .filter((j) => j.state === 'completed')
      .map((j) => ({ key: j.key, trials: j.trials, finishedAt: j.finishedAt ?? 0 }));
    for (let i = 0; i < done.length; i += PAGE) yield done.slice(i, i + PAGE);
  }

  async finishedValues(sweepHash: string, keys: readonly string[]): Promise<FinishedValue[]> {
    const values: FinishedValue[] = [];
    for (const key of keys) {
      const job = this.jobs.get(MemoryQueue.id(sweepHash, key));
      if (job?.state === 'completed') values.push({ key, data: job.data, value: job.value });
    }
    return values;
  }

  async removeFinished(sweepHash: string, keys: readonly string[]): Promise<number> {
    let removed = 0;
    for (const key of keys) {
      const id = MemoryQueue.id(sweepHash, key);
      if (this.jobs.get(id)?.state === 'completed') {
        this.jobs.delete(id);
        removed++;
      }
    }
    return removed;
  }

  async cancel(sweepHash: string): Promise<number> {
    let removed = 0;
    for (const job of this.ofSweep(sweepHash)) {
      if (job.state !== 'waiting') continue;
      this.jobs.delete(job.id);
      removed += job.trials;
    }
    this.waiting = this.waiting.filter((id) => this.jobs.has(id));
    return removed;
  }

  async batchSize(sweepHash: string, proposed: number, force: boolean): Promise<number> {
    const agreed = this.batchSizes.get(sweepHash);
    if (agreed !== undefined && !force) return agreed;
    this.batchSizes.set(sweepHash, proposed);
    return proposed;
  }

  async agreedBatchSize(sweepHash: string): Promise<number | undefined> {
    return this.batchSizes.get(sweepHash);
  }

  /** Forget everything, as a Redis that lost its data. */
  flush(): void {
    this.jobs.clear();
    this.waiting = [];
    this.batchSizes.clear();
  }

  async close(): Promise<void> {
    // Nothing to release; consumers are closed by their owners.
  }

  /** A consumer taking jobs from this queue. */
  consume(handler: JobHandler, options: { concurrency: number }): WorkConsumer {
    const consumer = new MemoryConsumer(this, handler, options.concurrency);
    this.consumers.add(consumer);
    return consumer;
  }

  /** @internal The next waiting job, marked active. */
  take(): MemoryJob | undefined {
    for (;;) {
      const id = this.waiting.shift();
      if (id === undefined) return undefined;
      const job = this.jobs.get(id);
      if (job === undefined || job.state !== 'waiting') continue;
      job.state = 'active';
      return job;
    }
  }

  /** @internal Apply a verdict to an active job. */
  settle(job: MemoryJob, verdict: JobVerdict): 'completed' | 'failed' | 'waiting' {
    if (this.jobs.get(job.id) !== job) return 'waiting';
    switch (verdict.kind) {
      case 'done':
        job.state = 'completed';
        job.value = verdict.value;
        if (verdict.leave === true) this.jobs.delete(job.id);
        // Strictly increasing finish times, like a clock that never stands still.
        this.clock = Math.max(this.clock + 1, Date.now());
        job.finishedAt = this.clock;
        return 'completed';
      case 'failed':
        job.attemptsMade++;
        job.failedReason = verdict.reason;
        if (verdict.retry && job.attemptsMade < JOB_ATTEMPTS) {
          job.state = 'waiting';
          this.waiting.push(job.id);
          return 'waiting';
        }
        job.state = 'failed';
        return 'failed';
      case 'handed-back':
        job.state = 'waiting';
        this.waiting.unshift(job.id);
        return 'waiting';
    }
  }

  /** @internal Let every consumer look for work. */
  wake(): void {
    for (const consumer of this.consumers) consumer.pump();
  }

  /** @internal */
  forget(consumer: MemoryConsumer): void {
    this.consumers.delete(consumer);
  }
}

class MemoryConsumer implements WorkConsumer {
  readonly counts: ConsumerCounts = { completed: 0, failed: 0 };
  private running = false;
  private readonly active = new Set<Promise<void>>();

  constructor(
    private readonly queue: MemoryQueue,
    private readonly handler: JobHandler,
    public concurrency: number,
  ) {}

  async start(): Promise<void> {
    this.running = true;
    this.pump();
  }

  pump(): void {
    while (this.running && this.active.size < this.concurrency) {
      const job = this.queue.take();
      if (job === undefined) return;
      const task = this.run(job).finally(() => {
        this.active.delete(task);
        this.pump();
      });
      this.active.add(task);
    }
  }

  private async run(job: MemoryJob): Promise<void> {
    let verdict: JobVerdict;
    try {
      verdict = await this.handler({
        id: job.id,
        data: job.data,
        unreadable: undefined,
        attempt: job.attemptsMade + 1,
      });
    } catch (error) {
      verdict = { kind: 'failed', reason: error instanceof Error ? error.message : String(error), retry: true };
    }
    const state = this.queue.settle(job, verdict);
    if (state === 'completed') this.counts.completed++;
    if (verdict.kind === 'failed') this.counts.failed++;
  }

  async close(): Promise<void> {
    this.running = false;
    while (this.active.size > 0) await Promise.all([...this.active]);
    this.queue.forget(this);
  }
}
