/**
 * Body of one pool thread: receives job payloads, runs them with runJob() and
 * posts the outcome back. runJob never throws for bad payloads or simulation
 * errors, so anything that escapes here is a real crash of the thread, which
 * the pool turns into a `crashed` outcome.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { type JobContext, runJob } from './run-job.js';
import type { ThreadReply, ThreadRequest } from './thread-pool.js';

if (parentPort === null) {
  throw new Error('thread-entry.js must be started as a worker thread by ThreadPool');
}
const port = parentPort;
const context = (workerData as { context: JobContext }).context;

port.on('message', (request: ThreadRequest) => {
  // Resolved either way: a job may one day complete asynchronously (a model in another process).
  void Promise.resolve(runJob(request.payload, context)).then((outcome) => {
    const reply: ThreadReply = { type: 'outcome', id: request.id, outcome };
    port.postMessage(reply);
  });
});

// Tells the pool this thread loaded; a thread that dies before this is a
// broken build, not a crashed job.
const ready: ThreadReply = { type: 'ready' };
port.postMessage(ready);
