import type { RedisTarget } from '../redis-url.js';
import type { QueueTarget } from './queue-target.js';

/** Where the queue is and how long to try reaching it: checked from the command line before any connection. */
export interface QueueSettings {
  /** The URL as given (it may hold a password: never print it; print `redis.masked`). */
  readonly url: string;
  readonly redis: RedisTarget;
  readonly queue: QueueTarget;
  /** Total time allowed for reaching the queue's store, retries included. */
  readonly connectTimeoutMs: number;
}
