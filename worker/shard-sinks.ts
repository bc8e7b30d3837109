import { ResultStore, type ShardFs, type ShardWriter } from '../shared/store/result-store.js';
import { GroupCommit } from './group-commit.js';

/**
 * When appended records must be on disk:
 * - 'each-job': before the job is reported done (a queue acknowledges it
 *   only then), by group commit: one fdatasync, off the main thread, covers
 *   every record appended since the previous one started;
 * - 'later': whenever the owner calls syncAll() (a lost record is simply run again).
 */
export type Durability = 'each-job' | 'later';

export interface ShardSinksOptions {
  /** Results root: sweep S writes to `<root>/<S>/results/` and `<root>/<S>/failures/`. */
  readonly root: string;
  /** This process's writer id (the shard file name in every sweep folder). */
  readonly writer: string;
  readonly durability: Durability;
  /** File calls of the shard writers (tests inject a failing disk or count syncs); default: node:fs. */
  readonly fs?: ShardFs;
  /**
   * With 'each-job': a sync of a shard starts at least this long (ms) after
   * the one before it started (default 0: back to back). An fdatasync costs
   * the machine CPU time whatever it covers; with trials of a millisecond,
   * syncs back to back were one per three trials and took CPU from the
   * threads. The embedded runner, which nobody waits on per job, uses a gap.
   */
  readonly minSyncGapMs?: number;
}

/** Called whenever the number of jobs waiting for a sync changes: +1 per new waiter, once per sync when it ends. */
export type AwaitingListener = (awaiting: number) => void;

/** The shard writers of one process, one per sweep folder, opened on first use. */
export class ShardSinks {
  readonly writer: string;
  private readonly writers = new Map<string, ShardWriter>();
  private readonly commits = new Map<ShardWriter, GroupCommit>();
  private readonly listeners = new Set<AwaitingListener>();
  private waiting = 0;

  constructor(private readonly options: ShardSinksOptions) {
    this.writer = options.writer;
  }

  /** The writer for sweep folder `name` (a plain folder name, checked by the caller). */
  writerFor(name: string): ShardWriter {
    let writer = this.writers.get(name);
    if (writer === undefined) {
      writer = ResultStore.at(this.options.root, name).openWriter(this.writer, this.options.fs);
      this.writers.set(name, writer);
    }
    return writer;
  }

  /**
   * Resolves once what was appended for `name` so far is as durable as the
   * policy asks. With 'each-job' the caller waits for the group commit that
   * covers its record; meanwhile it counts as awaiting a sync.
   */
  durable(name: string): Promise<void> {
    if (this.options.durability === 'later') return Promise.resolve();
    const writer = this.writerFor(name);
    let commit = this.commits.get(writer);
    if (commit === undefined) {
      commit = new GroupCommit(writer, (waiters) => this.changeWaiting(-waiters), this.options.minSyncGapMs);
      this.commits.set(writer, commit);
    }
    const covered = commit.covering();
    if (covered === undefined) return Promise.resolve();
    this.changeWaiting(+1);
    return covered;
  }

  /** Jobs whose record is written but not yet covered by a finished sync. */
  get awaiting(): number {
    return this.waiting;
  }

  /** Calls `listener` whenever `awaiting` changes; returns the function that stops that. */
  onAwaitingChange(listener: AwaitingListener): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  private changeWaiting(by: number): void {
    this.waiting += by;
    for (const listener of this.listeners) listener(this.waiting);
  }

  /** fdatasync every open shard on this thread; throws the first failure after trying them all. */
  syncAll(): void {
    let first: unknown;
    for (const writer of this.writers.values()) {
      try {
        writer.sync();
      } catch (error) {
        first ??= error;
      }
    }
    if (first !== undefined) throw first;
  }

  /** Closes every shard (one still being synced is closed when its sync ends). */
  close(): void {
    for (const writer of this.writers.values()) {
      try {
        writer.close();
      } catch {
        // Closing a shard that failed earlier: nothing left to save.
      }
    }
    this.writers.clear();
    this.commits.clear();
  }
}
