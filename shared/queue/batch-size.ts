/**
 * Trials per queue job. Every queue job costs Redis the same CPU and memory
 * whatever it carries (docs/scaling.md), so a job carries as many trials as
 * fit in about this much work: long enough that the queue's share is small,
 * short enough that a killed worker loses little and the last jobs of a sweep
 * spread over the workers.
 */
export const TARGET_BATCH_SECONDS = 1.5;
/** Most trials in one queue job (its payload then stays a few tens of kilobytes). */
export const MAX_BATCH_TRIALS = 1_000;

/**
 * Trials per job for trials of this cost (seconds of one core each), from
 * the calibrated cost; one when the cost is unknown (a batch of trials whose
 * cost nobody measured could take hours).
 */
export function batchSizeFor(secondsPerTrial: number | null | undefined): number {
  if (secondsPerTrial === null || secondsPerTrial === undefined || !Number.isFinite(secondsPerTrial)) return 1;
  if (secondsPerTrial <= 0) return MAX_BATCH_TRIALS;
  return Math.max(1, Math.min(MAX_BATCH_TRIALS, Math.round(TARGET_BATCH_SECONDS / secondsPerTrial)));
}
