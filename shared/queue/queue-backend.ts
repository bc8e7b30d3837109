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
