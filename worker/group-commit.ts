import type { ShardWriter } from '../shared/store/shard-writer.js';

interface Waiter {
  /** The writer's `appended` count this waiter needs covered. */
  readonly upTo: number;
  readonly done: () => void;
  readonly fail: (error: Error) => void;
}

/**
 * Group commit for one shard writer: records are appended as they come, and
 * one asynchronous fdatasync covers every record appended before it started.
 * While a sync runs, new records accumulate; when it ends, the next one starts
 * at once if anyone waits. So a burst of records costs a few syncs, not one
 * each, and the main thread never blocks on the disk.
 */
export class GroupCommit {
  /** Appended lines known to be on disk (covered by a finished sync). */
  private synced = 0;
  private running = false;
  private scheduled = false;
  private waiters: Waiter[] = [];
  /** A failed sync poisons the writer: every later wait fails with its error. */
  private failure: Error | undefined;
  /** When the last sync started (performance.now()). */
  private lastStart = Number.NEGATIVE_INFINITY;

  /**
   * `settled(n)` runs once per sync, before its n waiters hear of it (n = 0
   * when it covered none). A sync starts at least `minGapMs` after the one
   * before it started (see ShardSinksOptions.minSyncGapMs).
   */
  constructor(
    private readonly writer: ShardWriter,
    private readonly settled: (waiters: number) => void = () => undefined,
    private readonly minGapMs = 0,
  ) {}

  /**
   * A promise that resolves once a finished sync covers everything appended
   * so far, or undefined when that is already the case.
   */
  covering(): Promise<void> | undefined {
    const upTo = this.writer.appended;
    if (upTo <= this.synced) return undefined;
    if (this.failure !== undefined) return Promise.reject(this.failure);
    return new Promise<void>((done, fail) => {
      this.waiters.push({ upTo, done, fail });
      this.schedule();
    });
  }

  /**
   * Starting from idle, wait for the end of this turn of the event loop, so
   * that records of jobs that finished together share the first sync too.
   */
  private schedule(): void {
    if (this.running || this.scheduled) return;
    this.scheduled = true;
    setImmediate(() => {
      this.scheduled = false;
      this.start();
    });
  }

  private start(): void {
    if (this.running || this.waiters.length === 0) return;
    const now = performance.now();
    const wait = this.lastStart + this.minGapMs - now;
    if (wait > 0) {
      // Too soon after the last sync: one later sync covers these waiters and those still to come.
      if (this.scheduled) return;
      this.scheduled = true;
      setTimeout(() => {
        this.scheduled = false;
        this.start();
      }, wait);
      return;
    }
    this.lastStart = now;
    this.running = true;
    // Every line appended before the sync starts is on disk when it ends.
    const target = this.writer.appended;
    this.writer.syncAsync().then(
      () => {
        this.synced = target;
        let covered = 0;
        // upTo never decreases along the list: the covered waiters are a prefix.
        while (covered < this.waiters.length && (this.waiters[covered] as Waiter).upTo <= target) covered++;
        const ready = this.waiters.slice(0, covered);
        this.waiters = this.waiters.slice(covered);
        this.running = false;
        // The next sync starts before the acknowledgements run, so the disk stays busy.
        this.start();
        this.settled(ready.length);
        for (const waiter of ready) waiter.done();
      },
      (error: unknown) => {
        this.failure = error instanceof Error ? error : new Error(String(error));
        const failed = this.waiters;
        this.waiters = [];
        this.running = false;
        this.settled(failed.length);
        for (const waiter of failed) waiter.fail(this.failure);
      },
    );
  }
}
