import type { ResultRecord } from '../../shared/schemas/records.js';
import { expandJobs } from '../../shared/sweep/expand.js';
import type { LoadedSweep } from '../../shared/sweep/load.js';

/** A finished record for job `index` of a no-op sweep, as a worker would write it. */
export function resultFor(sweep: LoadedSweep, index: number, extra: Partial<ResultRecord> = {}): ResultRecord {
  const job = [...expandJobs(sweep)][index];
  if (job === undefined) throw new Error(`the sweep has no job ${index}`);
  return {
    v: 1,
    key: job.key,
    sweepHash: sweep.hash,
    model: sweep.model.id,
    modelVersion: sweep.model.version,
    replicate: job.replicate,
    seed: job.seed,
    point: job.point,
    metrics: { success: true, value: job.point['value'] as number },
    writer: 'w',
    run: 'r1',
    finishedAt: '2026-01-01T00:00:00.000Z',
    elapsedMs: 1,
    ...extra,
  };
}
