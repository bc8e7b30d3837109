import { availableParallelism } from 'node:os';
import { type ResourceLimits, Worker } from 'node:worker_threads';
import { FLOOR_MS, formatLimit, type JobTimeLimit, jobTimeLimit, limitSourceText } from '../shared/job-time-limit.js';
import { externalModelSettings } from '../shared/models/external/settings.js';
import { findModel } from '../shared/models/registry.js';
import { type JobPayload, JobPayloadSchema } from '../shared/schemas/records.js';
import { PoolBroken, PoolClosed, PoolTerminated } from './pool-errors.js';
import type { JobContext, JobOutcome } from './run-job.js';

/** Main thread -> pool thread: run this payload. */
export interface ThreadRequest {
  readonly id: number;
  readonly payload: unknown;
}

/**
 * Pool thread -> main thread: loaded and listening; the time limit of request
 * `id` when it is not the pool's provisional one (sent before the job runs);
 * or the outcome of request `id`.
 */
export type ThreadReply =
  | { readonly type: 'ready' }
  | { readonly type: 'limit'; readonly id: number; readonly limit: JobTimeLimit }
  | { readonly type: 'outcome'; readonly id: number; readonly outcome: JobOutcome };

/** What every pool thread gets as workerData. */
export interface ThreadData {
  readonly context: JobContext;
  readonly models: ReturnType<typeof externalModelSettings>;
  /** --model-timeout of this process, if given: every job's limit. */
  readonly optionMs: number | undefined;
  /** The limit the pool starts every job's clock with; a thread reports a job whose limit differs. */
  readonly provisional: JobTimeLimit;
}

/** A job stopped at its time limit, for the caller's log. */
export interface PoolTimeout {
  readonly payload: JobPayload | undefined;
  readonly limit: JobTimeLimit;
  /** Threads of the pool after the replacement was started (its size unless it is shutting down). */
  readonly threads: number;
}

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
  /**
   * Time limit of every job in ms, over anything the sweep or the model says
   * (--model-timeout). Defaults to the one this process registered with its
   * model options (shared/models/external/settings.ts).
   */
  readonly jobTimeoutMs?: number;
  /** Called when a job ran over its limit and its thread was replaced. */
  readonly onTimeout?: (event: PoolTimeout) => void;
}

/**
 * The compiled thread script beside this file. Run from the TypeScript
 * sources (the test runner), this file has no compiled sibling: threads then
 * use the build in dist/, which `npm test` makes first.
 */
function defaultEntry(): URL {
  const here = import.meta.url;
  return here.endsWith('.ts') ? new URL('../dist/worker/thread-entry.js', here) : new URL('./thread-entry.js', here);
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
  /** The running job's clock: when it was handed to the ready thread (performance.now()). */
  startedAt: number;
  /** The running job's limit as its thread reported it; undefined while it is the provisional one. */
  limit: JobTimeLimit | undefined;
  timer: NodeJS.Timeout | undefined;
}

/**
 * A fixed set of worker threads that run jobs with runJob(). Jobs wait in a
 * FIFO queue while every thread is busy; callers keep that queue short (the
 * sweep runner feeds a bounded number of jobs). Idle threads are unref'd so a
 * forgotten pool never keeps a process alive.
 *
 * Every job has a time limit (shared/job-time-limit.ts). Its clock starts
 * when a loaded thread gets the job, at the provisional limit (the option, or
 * the floor); the thread, which has the checked parameters, reports a
 * different limit before the job runs. A job over its limit cannot be stopped
 * inside its thread (a simulation loop does not yield), so the thread is
 * terminated and a new one started; the job fails as `timeout`, and jobs on
 * other threads run on.
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
  private readonly optionMs: number | undefined;
  private readonly provisional: JobTimeLimit;
  private readonly onTimeoutHook: ((event: PoolTimeout) => void) | undefined;
  private timedOut = 0;

  constructor(options: ThreadPoolOptions) {
    if (!Number.isInteger(options.threads) || options.threads < 1 || options.threads > MAX_THREADS) {
      throw new RangeError(`threads must be a whole number from 1 to ${MAX_THREADS}, got ${String(options.threads)}`);
    }
    this.threads = options.threads;
    this.context = options.context;
    this.entry = options.entry ?? defaultEntry();
    this.resourceLimits = options.resourceLimits;
    this.optionMs = options.jobTimeoutMs ?? externalModelSettings().timeoutMs;
    this.provisional =
      this.optionMs === undefined
        ? { ms: FLOOR_MS, source: 'estimate', threadMs: FLOOR_MS }
        : { ms: this.optionMs, source: 'option', threadMs: this.optionMs };
    this.onTimeoutHook = options.onTimeout;
    for (let i = 0; i < this.threads; i++) this.spawn();
  }

  /** Threads alive or starting: `threads`, except while a replacement is being started or the pool is stopping. */
  get liveThreads(): number {
    return this.slots.size;
  }

  /** Jobs stopped at their time limit since the pool started. */
  get timeouts(): number {
    return this.timedOut;
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
      this.stopClock(slot);
      return slot.worker;
    });
    this.slots.clear();
    await Promise.all(workers.map((w) => w.terminate()));
  }

  private spawn(): void {
    const workerData: ThreadData = {
      context: this.context,
      // Model folders the main thread registered: every thread registers them too.
      models: externalModelSettings(),
      optionMs: this.optionMs,
      provisional: this.provisional,
    };
    const worker = new Worker(this.entry, {
      workerData,
      ...(this.resourceLimits === undefined ? {} : { resourceLimits: this.resourceLimits }),
    });
    const slot: Slot = {
      worker,
      task: undefined,
      ready: false,
      dead: false,
      startedAt: 0,
      limit: undefined,
      timer: undefined,
    };
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
      // A job handed over while the thread was loading: its clock starts now.
      if (slot.task !== undefined) this.startClock(slot);
      return;
    }
    const task = slot.task;
    if (task === undefined || task.id !== reply.id) return;
    if (reply.type === 'limit') {
      slot.limit = reply.limit;
      this.armTimer(slot, slot.startedAt + reply.limit.threadMs - performance.now());
      return;
    }
    this.stopClock(slot);
    slot.task = undefined;
    slot.worker.unref();
    task.resolve(reply.outcome);
    this.dispatch();
  }

  private onDeath(slot: Slot, reason: string): void {
    if (slot.dead) return;
    slot.dead = true;
    this.stopClock(slot);
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
      this.stopClock(slot);
    }
    this.notifyIfDrained();
    void this.stopThreads();
  }

  /** The job on `slot` starts its clock at the provisional limit (its thread may report another). */
  private startClock(slot: Slot): void {
    slot.startedAt = performance.now();
    slot.limit = undefined;
    this.armTimer(slot, this.provisional.threadMs);
  }

  private armTimer(slot: Slot, delayMs: number): void {
    if (slot.timer !== undefined) clearTimeout(slot.timer);
    // setTimeout takes at most 2^31 - 1 ms (24.8 days); longer limits are re-armed when that fires.
    const wait = Math.max(0, Math.min(delayMs, 2 ** 31 - 1));
    slot.timer = setTimeout(() => this.onClock(slot), wait);
    // The running job keeps the process alive through its thread, not through this timer.
    slot.timer.unref();
  }

  private stopClock(slot: Slot): void {
    if (slot.timer !== undefined) clearTimeout(slot.timer);
    slot.timer = undefined;
  }

  private onClock(slot: Slot): void {
    slot.timer = undefined;
    const task = slot.task;
    if (slot.dead || task === undefined) return;
    const limit = slot.limit ?? this.provisionalLimitOf(task.payload);
    const left = slot.startedAt + limit.threadMs - performance.now();
    if (left > 1) {
      this.armTimer(slot, left);
      return;
    }
    // Over time: the thread cannot be interrupted, so it goes, and the job with it.
    slot.dead = true;
    this.slots.delete(slot);
    slot.task = undefined;
    void slot.worker.terminate();
    this.timedOut++;
    const parsed = JobPayloadSchema.safeParse(task.payload);
    const payload = parsed.success ? parsed.data : undefined;
    const backstop =
      limit.threadMs > limit.ms ? `, and its program was still not stopped after ${formatLimit(limit.threadMs)}` : '';
    task.resolve({
      ok: false,
      kind: 'timeout',
      message: `the job ran over its time limit of ${formatLimit(limit.ms)} (${limitSourceText(limit.source)})${backstop}; its thread was stopped and replaced`,
      // The same job with the same limit would run over again (jobs are deterministic): see docs/running.md.
      retryable: false,
      payload,
    });
    if (this.state === 'open' || this.state === 'closing') this.spawn();
    this.onTimeoutHook?.({ payload, limit, threads: this.slots.size });
    this.dispatch();
  }

  /**
   * The limit of a job whose thread reported none, so it runs under the
   * provisional one; worked out here only to say where it came from.
   */
  private provisionalLimitOf(payload: unknown): JobTimeLimit {
    const parsed = JobPayloadSchema.safeParse(payload);
    if (!parsed.success) return this.provisional;
    const model = findModel(parsed.data.model);
    const params = model?.params.safeParse(parsed.data.params);
    if (model === undefined || params === undefined || !params.success) return this.provisional;
    const limit = jobTimeLimit(model, params.data, parsed.data.timeoutMs, this.optionMs);
    return limit.threadMs === this.provisional.threadMs ? limit : this.provisional;
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
        // A thread still loading starts the clock when it is ready.
        if (idle.ready) this.startClock(idle);
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
