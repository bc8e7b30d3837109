/**
 * Body of one pool thread: receives job payloads, runs them with runAnyJob() and
 * posts the outcome back. runAnyJob never throws for bad payloads or simulation
 * errors, so anything that escapes here is a real crash of the thread, which
 * the pool turns into a `crashed` outcome.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { JobTimeLimit } from '../shared/job-time-limit.js';
import { runAnyJob } from './run-job.js';
import type { ThreadData, ThreadReply, ThreadRequest } from './thread-pool.js';

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

port.on('message', (request: ThreadRequest) => {
  // The pool timed this job from the provisional limit; a job with another limit says so before it runs.
  const onLimit = (limit: JobTimeLimit): void => {
    if (limit.threadMs === data.provisional.threadMs) return;
    const reply: ThreadReply = { type: 'limit', id: request.id, limit };
    port.postMessage(reply);
  };
  // Resolved either way: a job may complete asynchronously (a model in another process).
  void Promise.resolve(runAnyJob(request.payload, context, { optionMs: data.optionMs, onLimit })).then((outcome) => {
    const reply: ThreadReply = { type: 'outcome', id: request.id, outcome };
    port.postMessage(reply);
  });
});

// Tells the pool this thread loaded; a thread that dies before this is a
// broken build, not a crashed job.
const ready: ThreadReply = { type: 'ready' };
port.postMessage(ready);
