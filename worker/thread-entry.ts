/**
 * Body of one pool thread: receives job payloads, runs them one after another
 * with runAnyJob() and posts each outcome back. runAnyJob never throws for bad payloads or simulation
 * errors, so anything that escapes here is a real crash of the thread, which
 * the pool turns into a `crashed` outcome.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { JobTimeLimit } from '../shared/job-time-limit.js';
import { runAnyJob } from './run-job.js';
import type { ThreadData, ThreadMessage, ThreadReply, ThreadRequest } from './thread-pool.js';
import { isWithdrawn } from './withdrawn-range.js';

if (parentPort === null) {
  throw new Error('thread-entry.js must be started as a worker thread by ThreadPool');
}
const port = parentPort;
const data = workerData as ThreadData;
const context = data.context;
if (data.models !== undefined && data.models.folders.length > 0) {
  // Before any job: this thread's registry gets the main thread's model folders (loaded only when there are some).
  const { applyExternalModelSettings } = await import('../shared/models/external/model-folders.js');
  await applyExternalModelSettings(data.models);
}

const withdrawn = new BigInt64Array(data.withdrawn);
/** Requests not started yet: the pool hands a thread its next job while one runs. */
const inbox: ThreadRequest[] = [];
let running = false;

/** Runs the requests one after another (a job may complete asynchronously: a model in another process). */
function next(): void {
  if (running) return;
  const request = inbox.shift();
  if (request === undefined) return;
  if (isWithdrawn(withdrawn, request.id)) {
    port.postMessage({ type: 'withdrawn', id: request.id } satisfies ThreadReply);
    next();
    return;
  }
  running = true;
  // The pool timed this job from the provisional limit; a job with another limit says so before it runs.
  const onLimit = (limit: JobTimeLimit): void => {
    if (limit.threadMs === data.provisional.threadMs) return;
    port.postMessage({ type: 'limit', id: request.id, limit } satisfies ThreadReply);
  };
  void Promise.resolve(runAnyJob(request.payload, context, { optionMs: data.optionMs, onLimit })).then((outcome) => {
    port.postMessage({ type: 'outcome', id: request.id, outcome } satisfies ThreadReply);
    running = false;
    next();
  });
}

port.on('message', (message: ThreadMessage) => {
  if (Array.isArray(message)) inbox.push(...(message as readonly ThreadRequest[]));
  else inbox.push(message as ThreadRequest);
  next();
});

// Tells the pool this thread loaded; a thread that dies before this is a
// broken build, not a crashed job.
const ready: ThreadReply = { type: 'ready' };
port.postMessage(ready);
