/**
 * A queue worker process as it was before group commit (see
 * commit-baseline.ts), for the queue benchmark's side-by-side figures only.
 * Arguments: redis-url queue prefix out-dir threads. Says "worker ready" on
 * stderr once it takes jobs; SIGTERM finishes held jobs and leaves.
 */
import { randomBytes } from 'node:crypto';
import { queueSettings } from '../coordinator/queue-session.js';
import { createLogger } from '../shared/logger.js';
import { registerModelsFromOption } from '../shared/models/external/model-folders.js';
import { openWorkConsumer } from '../shared/queue/backends.js';
import { DEFAULT_LOCK_MS, DEFAULT_MAX_STALLED, DEFAULT_STALL_CHECK_MS } from '../shared/queue/work-consumer.js';
import { newWriterId } from '../shared/store/result-store.js';
import { JobRunner } from '../worker/job-runner.js';
import { QueueWorker } from '../worker/queue-worker.js';
import { ThreadPool } from '../worker/thread-pool.js';
import { BlockingSyncSinks } from './commit-baseline.js';

const [redis, queue, prefix, out, threadsText] = process.argv.slice(2);
if (redis === undefined || queue === undefined || prefix === undefined || out === undefined) {
  throw new Error('usage: baseline-worker.js redis-url queue prefix out-dir threads');
}
const threads = Number(threadsText ?? '1');
// The test models (no-op) come from RECALLSCAPE_MODELS, as for `recallscape worker`.
await registerModelsFromOption(undefined);
const settings = queueSettings({ redis, queue, prefix, connectTimeout: '10000' });
const writer = newWriterId('baseline');
const run = randomBytes(6).toString('hex');
const pool = new ThreadPool({ threads, context: { writer, run } });
const sinks = new BlockingSyncSinks({ root: out, writer, durability: 'each-job' });
// No sinks given: no jobs held for records waiting on a sync, as before.
const queueWorker = new QueueWorker({
  runner: new JobRunner({ pool, sinks, run }),
  resultsRoot: out,
  prefetch: 'auto',
});
const consumer = await openWorkConsumer(settings, queueWorker.handle, {
  concurrency: queueWorker.initialConcurrency,
  lockMs: DEFAULT_LOCK_MS,
  stallCheckMs: DEFAULT_STALL_CHECK_MS,
  maxStalledCount: DEFAULT_MAX_STALLED,
  logger: createLogger({ name: 'baseline-worker', level: 'warn' }),
});
queueWorker.attach(consumer);
await consumer.start();
process.stderr.write('worker ready\n');
await new Promise<void>((done) => process.once('SIGTERM', () => done()));
await consumer.close();
sinks.close();
await pool.close();
