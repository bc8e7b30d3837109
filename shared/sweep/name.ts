import { z } from 'zod';

export const SWEEP_NAME_RULE =
  'use 1 to 100 of a-z, 0-9, ".", "_", "-", starting with a letter or digit, with no "/" and no ".."';

/**
 * The one definition of a sweep name (sweep files, job payloads, folders):
 * it becomes a folder name under the results root, so it can never climb
 * out of it.
 */
export const SweepNameSchema = z
  .string({ error: `a sweep name is a string; ${SWEEP_NAME_RULE}` })
  .min(1, SWEEP_NAME_RULE)
  .max(100, SWEEP_NAME_RULE)
  .regex(/^[a-z0-9][a-z0-9._-]*$/, SWEEP_NAME_RULE)
  .refine((n) => !n.includes('..'), SWEEP_NAME_RULE)
  .describe('Folder name under the results root');
