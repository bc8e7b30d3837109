import { z } from 'zod';
import { InputError } from '../errors.js';

/** One queue serves every sweep, so any worker serves any sweep. */
export const DEFAULT_QUEUE_NAME = 'recallscape';
/** Start of every key the queue keeps in its store: `<prefix>:<queue>:...`. */
export const DEFAULT_QUEUE_PREFIX = 'rs';

/** Keys are built by joining with ':', so neither part may contain one. */
const NamePartSchema = z
  .string()
  .min(1, 'must not be empty')
  .max(64, 'at most 64 characters')
  .regex(/^[A-Za-z0-9._-]+$/, 'letters, digits, ".", "_" and "-" only');

/** Which queue: its name and key prefix, shared by coordinator and workers. */
export interface QueueTarget {
  readonly name: string;
  readonly prefix: string;
}

/** Check `--queue` and `--prefix`; InputError (exit 2) naming the option. */
export function queueTarget(name: string, prefix: string): QueueTarget {
  for (const [option, value] of [
    ['--queue', name],
    ['--prefix', prefix],
  ] as const) {
    const checked = NamePartSchema.safeParse(value);
    if (!checked.success) {
      const message = checked.error.issues.map((i) => i.message).join('; ');
      throw new InputError(`${option}: ${message} (got "${value}")`, [{ path: option, message }]);
    }
  }
  return { name, prefix };
}
