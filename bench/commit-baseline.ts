/**
 * How records were made durable before group commit, kept only so that the
 * benchmarks can measure old and new side by side in one run:
 * - queue worker: every job's record fdatasync'ed on the main thread before
 *   its acknowledgement (jobs finishing in the same turn shared one sync),
 *   and no jobs held for records waiting on a sync;
 * - embedded runner: one job per thread handed to the pool, records synced
 *   every few seconds and at the end, a job counted done when written.
 */
import { randomBytes } from 'node:crypto';
import { newWriterId, ResultStore } from '../shared/store/result-store.js';
import { expandJobs, toPayload } from '../shared/sweep/expand.js';
import type { LoadedSweep } from '../shared/sweep/load.js';
import { JobRunner } from '../worker/job-runner.js';
import { ShardSinks } from '../worker/shard-sinks.js';
import { ThreadPool } from '../worker/thread-pool.js';

/** Sinks whose durable() blocks the main thread on fdatasync, as before group commit. */
export class BlockingSyncSinks extends ShardSinks {
  private readonly pending = new Map<string, Promise<void>>();

  override durable(name: string): Promise<void> {
    const writer = this.writerFor(name);
    let pending = this.pending.get(name);
    if (pending === undefined) {
      pending = new Promise<void>((done, fail) => {
        setImmediate(() => {
          this.pending.delete(name);
          try {
            writer.sync();
            done();
          } catch (error) {
            fail(error instanceof Error ? error : new Error(String(error)));
          }
        });
      });
      this.pending.set(name, pending);
    }
    return pending;
  }
}

/** The embedded runner's loop before group commit (no signals), in `root`; `onDone` gets the count of finished jobs. */
export async function runEmbeddedBaseline(
  sweep: LoadedSweep,
  root: string,
  threads: number,
  onDone: (finished: number) => void,
): Promise<number> {
  const store = ResultStore.at(root, sweep.spec.name);
  await store.prepare(sweep);
  const writer = newWriterId();
  const run = randomBytes(6).toString('hex');
  const sinks = new ShardSinks({ root, writer, durability: 'later' });
  const pool = new ThreadPool({ threads, context: { writer, run } });
  const runner = new JobRunner({ pool, sinks, run });
  const inFlight = new Set<Promise<void>>();
  let ran = 0;
  const ticker = setInterval(() => sinks.syncAll(), 5_000);
  try {
    for (const job of expandJobs(sweep)) {
      while (inFlight.size >= threads) await Promise.race(inFlight);
      const task = runner
        .execute({ payload: toPayload(sweep, job), folder: sweep.spec.name, attempt: 1 })
        .then(() => {
          ran++;
          onDone(ran);
        })
        .finally(() => inFlight.delete(task));
      inFlight.add(task);
    }
    await Promise.all(inFlight);
  } finally {
    clearInterval(ticker);
    await pool.close();
    sinks.syncAll();
    sinks.close();
  }
  return ran;
}
