/**
 * Body of one pool thread: receives job payloads, runs them with runAnyJob() and
 * posts the outcome back. runAnyJob never throws for bad payloads or simulation
 * errors, so anything that escapes here is a real crash of the thread, which
 * the pool turns into a `crashed` outcome.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { ExternalModelSettings } from '../shared/models/external/settings.js';
import { type JobContext, runAnyJob } from './run-job.js';
import type { ThreadReply, ThreadRequest } from './thread-pool.js';

if (parentPort === null) {
  throw new Error('thread-entry.js must be started as a worker thread by ThreadPool');
}
const port = parentPort;
const data = workerData as { context: JobContext; models?: ExternalModelSettings };
const context = data.context;
if (data.models !== undefined && data.models.folders.length > 0) {
  // Before any job: this thread's registry gets the main thread's model folders (loaded only when there are some).
  const { applyExternalModelSettings } = await import('../shared/models/external/model-folders.js');
  await applyExternalModelSettings(data.models);
}

port.on('message', (request: ThreadRequest) => {
  // Resolved either way: a job may one day complete asynchronously (a model in another process).
  void Promise.resolve(runAnyJob(request.payload, context)).then((outcome) => {
    const reply: ThreadReply = { type: 'outcome', id: request.id, outcome };
    port.postMessage(reply);
  });
});

// Tells the pool this thread loaded; a thread that dies before this is a
// broken build, not a crashed job.
const ready: ThreadReply = { type: 'ready' };
port.postMessage(ready);
