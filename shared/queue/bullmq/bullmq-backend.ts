import type { QueueBackend } from '../queue-backend.js';
import { closeRedis, connectRedis } from './redis-connect.js';

/**
 * BullMQ on Redis: the queue for `redis://` and `rediss://` URLs. BullMQ
 * itself is loaded once Redis answers, so help, bad input and an unreachable
 * Redis are reported without loading it.
 */
export const bullmqBackend: QueueBackend = {
  async openQueue(settings, logger) {
    const { client } = await connectRedis({
      url: settings.url,
      connectTimeoutMs: settings.connectTimeoutMs,
      longLived: false,
      connectionName: 'recallscape-coordinator',
      ...(logger !== undefined ? { logger } : {}),
    });
    try {
      const { BullmqWorkQueue } = await import('./bullmq-work-queue.js');
      return await BullmqWorkQueue.over(client, settings, logger);
    } catch (error) {
      await closeRedis(client);
      throw error;
    }
  },
  async openConsumer(settings, handler, options) {
    // A worker keeps reconnecting for as long as it runs (Redis may restart under it).
    const { client } = await connectRedis({
      url: settings.url,
      connectTimeoutMs: settings.connectTimeoutMs,
      longLived: true,
      connectionName: 'recallscape-worker',
      logger: options.logger,
    });
    try {
      const { BullmqConsumer } = await import('./bullmq-consumer.js');
      return new BullmqConsumer(client, settings.queue, handler, options);
    } catch (error) {
      await closeRedis(client);
      throw error;
    }
  },
};
