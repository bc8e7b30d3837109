import { availableParallelism } from 'node:os';
import { type ResourceLimits, Worker } from 'node:worker_threads';
import { FLOOR_MS, formatLimit, type JobTimeLimit, jobTimeLimit, limitSourceText } from '../shared/job-time-limit.js';
import { externalModelSettings } from '../shared/models/external/settings.js';
import { findModel } from '../shared/models/registry.js';
import { type JobPayload, JobPayloadSchema } from '../shared/schemas/records.js';
import { PoolBroken, PoolClosed, PoolTerminated } from './pool-errors.js';
import type { JobContext, JobOutcome } from './run-job.js';
import { newWithdrawnRange, withdrawRange } from './withdrawn-range.js';

/** Main thread -> pool thread: run this payload. A message holds one request or a chunk of them, run in order. */
export interface ThreadRequest {
  readonly id: number;
  readonly payload: unknown;
}
export type ThreadMessage = ThreadRequest | readonly ThreadRequest[];

/**
 * Pool thread -> main thread: loaded and listening; the time limit of request
 * `id` when it is not the pool's provisional one (sent before the job runs);
 * the outcome of request `id`; or request `id` not started because the pool
 * took it back (withdrawQueued) while it waited in the thread.
 */
export type ThreadReply =
  | { readonly type: 'ready' }
  | { readonly type: 'limit'; readonly id: number; readonly limit: JobTimeLimit }
  | { readonly type: 'outcome'; readonly id: number; readonly outcome: JobOutcome }
  | { readonly type: 'withdrawn'; readonly id: number };

/** What every pool thread gets as workerData. */
export interface ThreadData {
  readonly context: JobContext;
  readonly models: ReturnType<typeof externalModelSettings>;
  /** --model-timeout of this process, if given: every job's limit. */
  readonly optionMs: number | undefined;
  /** The limit the pool starts every job's clock with; a thread reports a job whose limit differs. */
  readonly provisional: JobTimeLimit;
  /** This thread's range of request ids taken back (withdrawn-range.ts). */
  readonly withdrawn: SharedArrayBuffer;
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
  /**
   * Jobs handed to a loaded thread at once: the running one and those waiting
   * in the thread's inbox (default 2), so a thread starts its next job the
   * moment it finishes one instead of waiting for the main thread's turn.
   * While jobs are short (SHORT_JOB_MS) a thread holds SHORT_JOB_DEPTH.
   */
  readonly pipeline?: number;
}

/** Jobs in a thread at once by default: the running one and the next. */
export const DEFAULT_PIPELINE = 2;
/** Below this mean job time (ms), threads hold SHORT_JOB_DEPTH jobs, handed over in chunks. */
export const SHORT_JOB_MS = 2;
/**
 * Jobs a thread holds while jobs are short. A message to a sleeping thread
 * costs the sender about 40 to 50 µs on the project's virtual machine, as
 * much as a tiny job: so the jobs go over in chunks of half this depth, one
 * message each, refilled when half are done.
 */
export const SHORT_JOB_DEPTH = 16;

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
  /** Jobs handed to the thread, in order: the first runs (or is about to), the others wait in the thread. */
  readonly tasks: Task[];
  /** Shared with the thread: the range of request ids it must not start. */
  readonly withdrawn: BigInt64Array;
  ready: boolean;
  dead: boolean;
  /** The first job's clock: when it was handed to the ready thread, or when the job before it ended (performance.now()). */
  startedAt: number;
  /** The running job's limit as its thread reported it; undefined while it is the provisional one. */
  limit: JobTimeLimit | undefined;
  timer: NodeJS.Timeout | undefined;
}

/**
 * A fixed set of worker threads that run jobs with runJob(). Each loaded
 * thread holds up to `pipeline` jobs (the running one and the next), so it
 * never waits for the main thread between two jobs; beyond that, jobs wait in
 * a FIFO queue; callers keep that queue short (the sweep runner feeds a
 * bounded number of jobs). Idle threads are unref'd so a forgotten pool never
 * keeps a process alive.
 *
 * Every job has a time limit (shared/job-time-limit.ts). Its clock starts
 * when a loaded thread gets the job, or when the job before it in that thread
 * ends, at the provisional limit (the option, or the floor); the thread,
 * which has the checked parameters, reports a different limit before the job
 * runs. A job that waits in a thread whose job dies (crash, time limit) never
 * started: it goes back to the front of the queue. A job over its limit cannot be stopped
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
  private readonly pipeline: number;
  /** Moving mean of the time inside a thread of recent successful jobs (ms); undefined before the first. */
  private meanJobMs: number | undefined;
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
    const pipeline = options.pipeline ?? DEFAULT_PIPELINE;
    if (!Number.isInteger(pipeline) || pipeline < 1 || pipeline > 64) {
      throw new RangeError(`pipeline must be a whole number from 1 to 64, got ${String(pipeline)}`);
    }
    this.pipeline = pipeline;
    for (let i = 0; i < this.threads; i++) this.spawn();
  }

  /** Threads alive or starting: `threads`, except while a replacement is being started or the pool is stopping. */
  get liveThreads(): number {
    return this.slots.size;
  }

  /** Jobs a loaded thread holds now: more while jobs are short. */
  get depth(): number {
    return this.meanJobMs !== undefined && this.meanJobMs < SHORT_JOB_MS
      ? Math.max(this.pipeline, SHORT_JOB_DEPTH)
      : this.pipeline;
  }

  /**
   * Jobs a caller should keep handed to the pool so that no thread waits: what
   * the threads hold, plus one queued per thread.
   */
  get appetite(): number {
    return this.threads * (this.depth + 1);
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
   * run() promises reject with PoolClosed, at once for those in the queue and
   * when the thread says so for those waiting in a thread (one that started
   * in the meantime runs and resolves as usual). Running jobs are untouched.
   */
  withdrawQueued(): void {
    const waiting = this.queue;
    this.queue = [];
    for (const task of waiting) task.reject(new PoolClosed('taken back before it started'));
    for (const slot of this.slots) {
      const first = slot.tasks[1];
      const last = slot.tasks[slot.tasks.length - 1];
      if (first === undefined || last === undefined || !slot.ready) continue;
      withdrawRange(slot.withdrawn, first.id, last.id);
    }
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
    for (const slot of this.slots) abandoned.push(...slot.tasks.splice(0));
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
    const withdrawn = newWithdrawnRange();
    const workerData: ThreadData = {
      withdrawn,
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
      tasks: [],
      withdrawn: new BigInt64Array(withdrawn),
      ready: false,
      dead: false,
      startedAt: 0,
      limit: undefined,
      timer: undefined,
    };
    this.slots.add(slot);
    worker.unref();
    worker.on('message', (reply: ThreadReply) => this.onReply(slot, reply));
    // 'error' (uncaught exception, out of memory) is followed by 'exit', which
    // comes after every message the thread posted: the death is handled there,
    // so outcomes of jobs that finished before it are not lost.
    let error: Error | undefined;
    worker.on('error', (e: Error) => {
      error ??= e;
    });
    worker.on('exit', (code: number) =>
      this.onDeath(
        slot,
        error === undefined ? `the thread exited with code ${code}` : `${error.name}: ${error.message}`,
      ),
    );
  }

  private onReply(slot: Slot, reply: ThreadReply): void {
    if (slot.dead) return;
    if (reply.type === 'ready') {
      slot.ready = true;
      this.startupFailures = 0;
      // A job handed over while the thread was loading: its clock starts now.
      if (slot.tasks.length > 0) this.startClock(slot);
      this.dispatch();
      return;
    }
    if (reply.type === 'withdrawn') {
      const at = slot.tasks.findIndex((t) => t.id === reply.id);
      if (at < 0) return;
      const [task] = slot.tasks.splice(at, 1);
      task?.reject(new PoolClosed('taken back before it started'));
      this.nextInSlot(slot, at === 0);
      this.notifyIfDrained();
      return;
    }
    // A thread runs its jobs in order, so a limit or an outcome is the first job's.
    const task = slot.tasks[0];
    if (task === undefined || task.id !== reply.id) return;
    if (reply.type === 'limit') {
      slot.limit = reply.limit;
      this.armTimer(slot, slot.startedAt + reply.limit.threadMs - performance.now());
      return;
    }
    slot.tasks.shift();
    this.nextInSlot(slot, true);
    if (reply.outcome.ok) {
      const ms = reply.outcome.record.elapsedMs;
      this.meanJobMs = this.meanJobMs === undefined ? ms : 0.9 * this.meanJobMs + 0.1 * ms;
    }
    task.resolve(reply.outcome);
    this.dispatch();
  }

  /** After the first job of `slot` left (`first`) or a later one: the clock moves to the new first job, if any. */
  private nextInSlot(slot: Slot, first: boolean): void {
    if (!first) return;
    this.stopClock(slot);
    if (slot.tasks.length > 0) this.startClock(slot);
    else slot.worker.unref();
  }

  /** The jobs waiting behind the first one in a thread that is gone: none started, so they go back to the front of the queue. */
  private requeueWaiting(slot: Slot): void {
    const waiting = slot.tasks.splice(1);
    if (waiting.length > 0) this.queue.unshift(...waiting);
  }

  private onDeath(slot: Slot, reason: string): void {
    if (slot.dead) return;
    slot.dead = true;
    this.stopClock(slot);
    this.slots.delete(slot);
    const tasks = slot.tasks.splice(0);
    const task = tasks[0];
    if (!slot.ready) {
      // The thread never loaded (missing build, broken module): its job never
      // ran, so it goes back to the front of the queue.
      this.queue.unshift(...tasks);
      this.startupFailures++;
      if (this.startupFailures >= MAX_STARTUP_FAILURES) {
        this.breakDown(
          `worker threads fail to start (${reason}); is the build in dist/ complete? Run \`npm run build\``,
        );
        return;
      }
    } else if (task !== undefined) {
      // Outcomes the thread posted before it died came first ('exit' follows
      // them), so the first job is the one that was running; the others never started.
      this.queue.unshift(...tasks.slice(1));
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
      for (const task of slot.tasks.splice(0)) task.reject(error);
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
    const task = slot.tasks[0];
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
    this.requeueWaiting(slot);
    slot.tasks.length = 0;
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
    const depth = this.depth;
    for (;;) {
      if (this.queue.length === 0) break;
      // The thread with the fewest jobs that has room: idle threads first, then
      // the next jobs for busy ones, topped up once at most half of `depth` is
      // left (one message per chunk). A thread still loading takes one job.
      let idle: Slot | undefined;
      for (const slot of this.slots) {
        if (slot.dead) continue;
        const room = slot.ready ? slot.tasks.length <= depth / 2 : slot.tasks.length === 0;
        if (!room) continue;
        if (idle === undefined || slot.tasks.length < idle.tasks.length) idle = slot;
        if (slot.tasks.length === 0) break;
      }
      if (idle === undefined) break;
      const count = Math.min(this.queue.length, idle.ready ? depth - idle.tasks.length : 1);
      this.handOver(idle, this.queue.splice(0, count));
    }
    this.notifyIfDrained();
  }

  /** Post `tasks` to `slot` in one message; a payload that cannot be copied to a thread fails alone as invalid. */
  private handOver(slot: Slot, tasks: Task[]): void {
    const wasEmpty = slot.tasks.length === 0;
    const requests = tasks.map((task): ThreadRequest => ({ id: task.id, payload: task.payload }));
    try {
      slot.worker.postMessage(requests.length === 1 ? requests[0] : requests);
      slot.tasks.push(...tasks);
    } catch {
      // Some payload cannot be cloned (e.g. it holds a function): send them one by one to find it.
      for (const task of tasks) {
        try {
          slot.worker.postMessage({ id: task.id, payload: task.payload } satisfies ThreadRequest);
          slot.tasks.push(task);
        } catch (error) {
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
    }
    if (slot.tasks.length === 0) return;
    slot.worker.ref();
    // A thread still loading starts the clock when it is ready; a job behind another when that one ends.
    if (wasEmpty && slot.ready) this.startClock(slot);
  }

  private notifyIfDrained(): void {
    if (this.drainWaiters.length === 0) return;
    if (this.queue.length > 0) return;
    for (const slot of this.slots) if (slot.tasks.length > 0) return;
    const waiters = this.drainWaiters;
    this.drainWaiters = [];
    for (const resolve of waiters) resolve();
  }
}
