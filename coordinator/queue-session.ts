import { type Command, Option } from 'commander';
import type { Logger } from '../shared/logger.js';
import { checkQueueUrl, openWorkQueue } from '../shared/queue/backends.js';
import type { QueueSettings } from '../shared/queue/queue-settings.js';
import { DEFAULT_QUEUE_NAME, DEFAULT_QUEUE_PREFIX, queueTarget } from '../shared/queue/queue-target.js';
import type { WorkQueue } from '../shared/queue/work-queue.js';
import { REDIS_URL_ENV, resolveRedisUrl } from '../shared/redis-url.js';
import { parseWholeNumber } from './cli-support.js';

export type { QueueSettings } from '../shared/queue/queue-settings.js';

/** What every Redis-using command accepts on its command line. */
export interface QueueCliOptions {
  readonly redis?: string;
  readonly queue: string;
  readonly prefix: string;
  readonly connectTimeout: string;
}

/**
 * How long a command run by a person keeps trying to reach Redis: long enough
 * for a few retries over a slow network, short enough that an unreachable
 * Redis is reported in a couple of seconds.
 */
export const DEFAULT_CONNECT_TIMEOUT_MS = 1_500;
/** A worker waits longer at start: it is often started alongside Redis (a compose file, a boot script). */
export const WORKER_CONNECT_TIMEOUT_MS = 10_000;

/** Add --redis, --queue, --prefix and --connect-timeout to a command. */
export function addQueueOptions(
  command: Command,
  redisRequired = true,
  connectTimeoutMs = DEFAULT_CONNECT_TIMEOUT_MS,
): Command {
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
        String(connectTimeoutMs),
      ),
    );
}

/**
 * The queue options to repeat in a command printed for the user (--queue and
 * --prefix when not the defaults). Never the URL: it may hold a password, and
 * the environment variable is the advised way to give it.
 */
export function queueFlags(options: Pick<QueueCliOptions, 'queue' | 'prefix'>): string[] {
  return [
    ...(options.queue === DEFAULT_QUEUE_NAME ? [] : ['--queue', options.queue]),
    ...(options.prefix === DEFAULT_QUEUE_PREFIX ? [] : ['--prefix', options.prefix]),
  ];
}

/** Check every queue option without touching the network (bad input -> exit 2 before anything happens). */
export function queueSettings(options: QueueCliOptions): QueueSettings {
  const url = resolveRedisUrl(options.redis);
  return {
    url,
    masked: checkQueueUrl(url).masked,
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

/** Run `body` with the queue open (connection failures are one ServiceError line); always closes it. */
export async function withQueue<T>(
  settings: QueueSettings,
  logger: Logger | undefined,
  body: (queue: WorkQueue) => Promise<T>,
): Promise<T> {
  const queue = await openWorkQueue(settings, logger);
  try {
    return await body(queue);
  } finally {
    await queue.close();
  }
}
