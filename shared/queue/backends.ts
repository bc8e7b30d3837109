import type { Logger } from '../logger.js';
import type { QueueBackend } from './queue-backend.js';
import type { QueueSettings } from './queue-settings.js';
import type { ConsumerOptions, JobHandler, WorkConsumer } from './work-consumer.js';
import type { WorkQueue } from './work-queue.js';

/**
 * Queue backends by URL scheme, loaded on first use so commands that need no
 * queue never load one. A new backend is one file and one line here (and its
 * scheme accepted where the URL is checked).
 */
const BACKENDS: Readonly<Record<string, () => Promise<QueueBackend>>> = {
  'redis:': async () => (await import('./bullmq/bullmq-backend.js')).bullmqBackend,
  'rediss:': async () => (await import('./bullmq/bullmq-backend.js')).bullmqBackend,
};

async function backendFor(settings: QueueSettings): Promise<QueueBackend> {
  const scheme = /^[a-z][a-z0-9+.-]*:/i.exec(settings.url)?.[0].toLowerCase() ?? '';
  const load = Object.hasOwn(BACKENDS, scheme) ? BACKENDS[scheme] : undefined;
  // The URL was checked when the settings were made; reaching this is a bug.
  if (load === undefined) throw new RangeError(`no queue backend for "${scheme}" URLs`);
  return load();
}

/** The coordinator's view of the queue the settings name. */
export async function openWorkQueue(settings: QueueSettings, logger?: Logger): Promise<WorkQueue> {
  return (await backendFor(settings)).openQueue(settings, logger);
}

/** A worker's consumer of the queue the settings name. */
export async function openWorkConsumer(
  settings: QueueSettings,
  handler: JobHandler,
  options: ConsumerOptions,
): Promise<WorkConsumer> {
  return (await backendFor(settings)).openConsumer(settings, handler, options);
}
