import { availableParallelism } from 'node:os';
import { type ResourceLimits, Worker } from 'node:worker_threads';
import { externalModelSettings } from '../shared/models/external/settings.js';
import { JobPayloadSchema } from '../shared/schemas/records.js';
import { PoolBroken, PoolClosed, PoolTerminated } from './pool-errors.js';
import type { JobContext, JobOutcome } from './run-job.js';

/** Main thread -> pool thread: run this payload. */
export interface ThreadRequest {
  readonly id: number;
  readonly payload: unknown;
}

/** Pool thread -> main thread: loaded and listening, or the outcome of request `id`. */
export type ThreadReply =
  | { readonly type: 'ready' }
  | { readonly type: 'outcome'; readonly id: number; readonly outcome: JobOutcome };

export interface ThreadPoolOptions {
  readonly threads: number;
  readonly context: JobContext;
  /**
   * Script every thread runs. Defaults to the compiled thread-entry.js next to
   * this file; tests pass a wrapper that injects faults.
   */
  readonly entry?: URL;
  /** V8 heap limits per thread, so one runaway job cannot take the process down. */
  readonly resourceLimits?: ResourceLimits;
}

/** Most threads one process may start; more is a typo, not a machine. */
export const MAX_THREADS = 1024;

/** One thread per core, the default everywhere a thread count is optional. */
export function defaultThreadCount(): number {
  return Math.max(1, availableParallelism());
}

/** Threads that die before they finish loading, in a row, before the pool gives up. */
const MAX_STARTUP_FAILURES = 3;

interface Task {
  readonly id: number;
  readonly payload: unknown;
  readonly resolve: (outcome: JobOutcome) => void;
  readonly reject: (error: Error) => void;
}

interface Slot {
  readonly worker: Worker;
  task: Task | undefined;
  ready: boolean;
  dead: boolean;
}

/**
 * A fixed set of worker threads that run jobs with runJob(). Jobs wait in a
 * FIFO queue while every thread is busy; callers keep that queue short (the
 * sweep runner feeds a bounded number of jobs). Idle threads are unref'd so a
 * forgotten pool never keeps a process alive.
 */
export class ThreadPool {
  readonly threads: number;
  private readonly context: JobContext;
  private readonly entry: URL;
  private readonly resourceLimits: ResourceLimits | undefined;
  private readonly slots = new Set<Slot>();
  private queue: Task[] = [];
  private state: 'open' | 'closing' | 'closed' | 'terminated' | 'broken' = 'open';
  private brokenReason = '';
  private startupFailures = 0;
  private nextId = 1;
  private drainWaiters: Array<() => void> = [];

  constructor(options: ThreadPoolOptions) {
    if (!Number.isInteger(options.threads) || options.threads < 1 || options.threads > MAX_THREADS) {
      throw new RangeError(`threads must be a whole number from 1 to ${MAX_THREADS}, got ${String(options.threads)}`);
    }
    this.threads = options.threads;
    this.context = options.context;
    this.entry = options.entry ?? new URL('./thread-entry.js', import.meta.url);
    this.resourceLimits = options.resourceLimits;
    for (let i = 0; i < this.threads; i++) this.spawn();
  }

  run(payload: unknown): Promise<JobOutcome> {
    if (this.state === 'broken') return Promise.reject(new PoolBroken(this.brokenReason));
    if (this.state === 'terminated') return Promise.reject(new PoolTerminated('the thread pool was terminated'));
    if (this.state !== 'open') return Promise.reject(new PoolClosed('the thread pool is closed'));
    return new Promise<JobOutcome>((resolve, reject) => {
      this.queue.push({ id: this.nextId++, payload, resolve, reject });
      this.dispatch();
    });
  }

  /**
   * Take back the jobs waiting for a thread (none of them started): their
   * run() promises reject with PoolClosed. Running jobs are untouched.
   */
  withdrawQueued(): void {
    const waiting = this.queue;
    this.queue = [];
    const error = new PoolClosed('taken back before it started');
    for (const task of waiting) task.reject(error);
    this.notifyIfDrained();
  }

  /** Finish running and queued jobs, then stop the threads. */
  async close(): Promise<void> {
    if (this.state === 'open') this.state = 'closing';
    if (this.state === 'closing') {
      await new Promise<void>((resolve) => {
        this.drainWaiters.push(resolve);
        this.notifyIfDrained();
      });
      // A concurrent terminate() may have won the race.
      if (this.state === 'closing') this.state = 'closed';
    }
    await this.stopThreads();
  }

  /** Stop now: running jobs are abandoned, pending run() promises reject with PoolTerminated. */
  async terminate(): Promise<void> {
    if (this.state !== 'closed' && this.state !== 'broken') this.state = 'terminated';
    const error = new PoolTerminated('the thread pool was terminated');
    const abandoned = this.queue;
    this.queue = [];
    for (const slot of this.slots) {
      if (slot.task !== undefined) abandoned.push(slot.task);
      slot.task = undefined;
    }
    for (const task of abandoned) task.reject(error);
    this.notifyIfDrained();
    await this.stopThreads();
  }

  private async stopThreads(): Promise<void> {
    const workers = [...this.slots].map((slot) => {
      slot.dead = true;
      return slot.worker;
    });
    this.slots.clear();
    await Promise.all(workers.map((w) => w.terminate()));
  }

  private spawn(): void {
    const worker = new Worker(this.entry, {
      // Model folders the main thread registered: every thread registers them too.
      workerData: { context: this.context, models: externalModelSettings() },
      ...(this.resourceLimits === undefined ? {} : { resourceLimits: this.resourceLimits }),
    });
    const slot: Slot = { worker, task: undefined, ready: false, dead: false };
    this.slots.add(slot);
    worker.unref();
    worker.on('message', (reply: ThreadReply) => this.onReply(slot, reply));
    // 'error' (uncaught exception, out of memory) is followed by 'exit'; the first one wins.
    worker.on('error', (error: Error) => this.onDeath(slot, `${error.name}: ${error.message}`));
    worker.on('exit', (code: number) => this.onDeath(slot, `the thread exited with code ${code}`));
  }

  private onReply(slot: Slot, reply: ThreadReply): void {
    if (slot.dead) return;
    if (reply.type === 'ready') {
      slot.ready = true;
      this.startupFailures = 0;
      return;
    }
    const task = slot.task;
    if (task === undefined || task.id !== reply.id) return;
    slot.task = undefined;
    slot.worker.unref();
    task.resolve(reply.outcome);
    this.dispatch();
  }

  private onDeath(slot: Slot, reason: string): void {
    if (slot.dead) return;
    slot.dead = true;
    this.slots.delete(slot);
    const task = slot.task;
    slot.task = undefined;
    if (!slot.ready) {
      // The thread never loaded (missing build, broken module): its job never
      // ran, so it goes back to the front of the queue.
      if (task !== undefined) this.queue.unshift(task);
      this.startupFailures++;
      if (this.startupFailures >= MAX_STARTUP_FAILURES) {
        this.breakDown(
          `worker threads fail to start (${reason}); is the build in dist/ complete? Run \`npm run build\``,
        );
        return;
      }
    } else if (task !== undefined) {
      const parsed = JobPayloadSchema.safeParse(task.payload);
      task.resolve({
        ok: false,
        kind: 'crashed',
        message: `the thread running this job died: ${reason}`,
        retryable: true,
        payload: parsed.success ? parsed.data : undefined,
      });
    }
    if (this.state === 'open' || this.state === 'closing') this.spawn();
    this.dispatch();
  }

  private breakDown(reason: string): void {
    this.state = 'broken';
    this.brokenReason = reason;
    const error = new PoolBroken(reason);
    const waiting = this.queue;
    this.queue = [];
    for (const task of waiting) task.reject(error);
    for (const slot of this.slots) {
      if (slot.task !== undefined) slot.task.reject(error);
      slot.task = undefined;
    }
    this.notifyIfDrained();
    void this.stopThreads();
  }

  private dispatch(): void {
    for (;;) {
      if (this.queue.length === 0) break;
      let idle: Slot | undefined;
      for (const slot of this.slots) {
        if (slot.task === undefined && !slot.dead) {
          idle = slot;
          break;
        }
      }
      if (idle === undefined) break;
      const task = this.queue.shift() as Task;
      idle.task = task;
      idle.worker.ref();
      try {
        const request: ThreadRequest = { id: task.id, payload: task.payload };
        idle.worker.postMessage(request);
      } catch (error) {
        // The payload cannot be copied to a thread (e.g. it holds a function).
        idle.task = undefined;
        idle.worker.unref();
        const message = error instanceof Error ? error.message : String(error);
        task.resolve({
          ok: false,
          kind: 'invalid',
          message: `job payload cannot be sent to a thread: ${message}`,
          retryable: false,
          payload: undefined,
        });
      }
    }
    this.notifyIfDrained();
  }

  private notifyIfDrained(): void {
    if (this.drainWaiters.length === 0) return;
    if (this.queue.length > 0) return;
    for (const slot of this.slots) if (slot.task !== undefined) return;
    const waiters = this.drainWaiters;
    this.drainWaiters = [];
    for (const resolve of waiters) resolve();
  }
}
