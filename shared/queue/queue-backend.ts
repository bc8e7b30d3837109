import type { Logger } from '../logger.js';
import type { QueueSettings } from './queue-settings.js';
import type { ConsumerOptions, JobHandler, WorkConsumer } from './work-consumer.js';
import type { WorkQueue } from './work-queue.js';

/** A queue implementation: one per kind of store, chosen by the URL's scheme. */
export interface QueueBackend {
  /** For a one-shot command: connected within the settings' timeout, or one ServiceError line. */
  openQueue(settings: QueueSettings, logger?: Logger): Promise<WorkQueue>;
  /** For a worker: stays connected (reconnecting) for as long as it runs. */
  openConsumer(settings: QueueSettings, handler: JobHandler, options: ConsumerOptions): Promise<WorkConsumer>;
}

/**
 * How a backend is registered (shared/queue/backends.ts): the URL schemes it
 * serves, a check of its URLs that runs before any connection (and must be
 * cheap to load: it runs for every queue command), and the backend itself,
 * loaded on first use.
 */
export interface BackendEntry {
  /** Lower-case schemes with their colon, e.g. "redis:". */
  readonly schemes: readonly string[];
  /** Throws InputError naming `--redis` for a bad URL; returns the URL with secrets masked. */
  checkUrl(url: string): { readonly masked: string };
  load(): Promise<QueueBackend>;
}
