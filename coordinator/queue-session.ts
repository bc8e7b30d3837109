import type { Queue } from 'bullmq';
import { type Command, Option } from 'commander';
import type { Redis } from 'ioredis';
import type { Logger } from '../shared/logger.js';
import { DEFAULT_QUEUE_NAME, DEFAULT_QUEUE_PREFIX, type QueueTarget, queueTarget } from '../shared/queue-names.js';
import { parseRedisUrl, REDIS_URL_ENV, type RedisTarget, resolveRedisUrl } from '../shared/redis-url.js';
import { parseWholeNumber } from './cli-support.js';
import { asServiceError, closeRedis, connectRedis } from './redis-connect.js';

/** What every Redis-using command accepts on its command line. */
export interface QueueCliOptions {
  readonly redis?: string;
  readonly queue: string;
  readonly prefix: string;
  readonly connectTimeout: string;
}

export const DEFAULT_CONNECT_TIMEOUT_MS = 10_000;

/** Add --redis, --queue, --prefix and --connect-timeout to a command. */
export function addQueueOptions(command: Command, redisRequired = true): Command {
  return command
    .addOption(
      new Option(
        '--redis <url>',
        `Redis URL, redis://[:password@]host[:port][/db] or rediss:// for TLS (default: env ${REDIS_URL_ENV}${redisRequired ? '' : '; without it, files only'})`,
      ),
    )
    .addOption(new Option('--queue <name>', 'queue name shared by coordinator and workers').default(DEFAULT_QUEUE_NAME))
    .addOption(new Option('--prefix <prefix>', 'prefix of every Redis key of the queue').default(DEFAULT_QUEUE_PREFIX))
    .addOption(
      new Option('--connect-timeout <ms>', 'how long to keep trying to reach Redis before giving up').default(
        String(DEFAULT_CONNECT_TIMEOUT_MS),
      ),
    );
}

export interface QueueSettings {
  readonly url: string;
  readonly redis: RedisTarget;
  readonly queue: QueueTarget;
  readonly connectTimeoutMs: number;
}

/** Check every queue option without touching the network (bad input -> exit 2 before anything happens). */
export function queueSettings(options: QueueCliOptions): QueueSettings {
  const url = resolveRedisUrl(options.redis);
  return {
    url,
    redis: parseRedisUrl(url),
    queue: queueTarget(options.queue, options.prefix),
    connectTimeoutMs: parseWholeNumber('--connect-timeout', options.connectTimeout, 100, 600_000),
  };
}

/** As queueSettings, but `undefined` when neither --redis nor the environment names a Redis. */
export function optionalQueueSettings(options: QueueCliOptions): QueueSettings | undefined {
  const fromEnv = process.env[REDIS_URL_ENV];
  if (options.redis === undefined && (fromEnv === undefined || fromEnv === '')) return undefined;
  return queueSettings(options);
}

/** A connected queue for one command; `close()` releases everything. */
export interface QueueSession {
  readonly settings: QueueSettings;
  readonly client: Redis;
  readonly queue: Queue;
  close(): Promise<void>;
}

/** Connect (bounded, one clear ServiceError line on failure) and open the queue. */
export async function openQueueSession(settings: QueueSettings, logger?: Logger): Promise<QueueSession> {
  const { client } = await connectRedis({
    url: settings.url,
    connectTimeoutMs: settings.connectTimeoutMs,
    longLived: false,
    connectionName: 'recallscape-coordinator',
    ...(logger !== undefined ? { logger } : {}),
  });
  // BullMQ is loaded once Redis answers: help, bad input and an unreachable Redis are reported without it.
  const { Queue } = await import('bullmq');
  const queue = new Queue(settings.queue.name, {
    connection: client,
    prefix: settings.queue.prefix,
    // The event stream is for live dashboards only; keep it short (memory).
    streams: { events: { maxLen: 1_000 } },
  });
  queue.on('error', (error) => logger?.warn({ reason: error.message }, 'queue trouble'));
  try {
    await queue.waitUntilReady();
  } catch (error) {
    await closeRedis(client);
    throw asServiceError(error, settings.redis);
  }
  return {
    settings,
    client,
    queue,
    async close() {
      try {
        await queue.close();
      } catch {
        // The connection is already gone: nothing to flush.
      }
      await closeRedis(client);
    },
  };
}

/** Run `body` with an open queue session; Redis failures become one ServiceError line. */
export async function withQueue<T>(
  settings: QueueSettings,
  logger: Logger | undefined,
  body: (session: QueueSession) => Promise<T>,
): Promise<T> {
  const session = await openQueueSession(settings, logger);
  try {
    return await body(session);
  } catch (error) {
    throw asServiceError(error, settings.redis);
  } finally {
    await session.close();
  }
}
