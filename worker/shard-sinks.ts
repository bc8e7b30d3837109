import { ResultStore, type ShardFs, type ShardWriter } from '../shared/store/result-store.js';

/**
 * When appended records must be on disk:
 * - 'each-job': before the job is reported done (a queue acknowledges it
 *   only then); jobs that finish in the same turn of the event loop share
 *   one fdatasync;
 * - 'later': whenever the owner calls syncAll() (the embedded runner does it
 *   every few seconds and at the end; a lost record there is simply run again).
 */
export type Durability = 'each-job' | 'later';

export interface ShardSinksOptions {
  /** Results root: sweep S writes to `<root>/<S>/results/` and `<root>/<S>/failures/`. */
  readonly root: string;
  /** This process's writer id (the shard file name in every sweep folder). */
  readonly writer: string;
  readonly durability: Durability;
  /** File calls of the shard writers (tests inject a failing disk); default: node:fs. */
  readonly fs?: ShardFs;
}

/** The shard writers of one process, one per sweep folder, opened on first use. */
export class ShardSinks {
  readonly writer: string;
  private readonly writers = new Map<string, ShardWriter>();
  private readonly pendingSyncs = new Map<ShardWriter, Promise<void>>();

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

  /** Resolves once what was appended for `name` so far is as durable as the policy asks. */
  durable(name: string): Promise<void> {
    if (this.options.durability === 'later') return Promise.resolve();
    const writer = this.writerFor(name);
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

  /** fdatasync every open shard; throws the first failure after trying them all. */
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

  close(): void {
    for (const writer of this.writers.values()) {
      try {
        writer.close();
      } catch {
        // Closing a shard that failed earlier: nothing left to save.
      }
    }
    this.writers.clear();
  }
}
