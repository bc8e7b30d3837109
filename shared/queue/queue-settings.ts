import type { QueueTarget } from './queue-target.js';

/** Where the queue is and how long to try reaching it: checked from the command line before any connection. */
export interface QueueSettings {
  /** The URL as given (it may hold a password: never print it; print `masked`). */
  readonly url: string;
  /** The URL with any secret replaced by `***`: the only form that may be printed or logged. */
  readonly masked: string;
  readonly queue: QueueTarget;
  /** Total time allowed for reaching the queue's store, retries included. */
  readonly connectTimeoutMs: number;
}
