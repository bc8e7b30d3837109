import { parseRedisUrl } from '../../redis-url.js';
import type { BackendEntry } from '../queue-backend.js';

/**
 * BullMQ on Redis, for `redis://` and `rediss://` URLs. Only the URL check
 * is loaded with the command; the backend, and BullMQ with it, when a queue
 * is opened.
 */
export const bullmqEntry: BackendEntry = {
  schemes: ['redis:', 'rediss:'],
  checkUrl: (url) => ({ masked: parseRedisUrl(url).masked }),
  load: async () => (await import('./bullmq-backend.js')).bullmqBackend,
};
