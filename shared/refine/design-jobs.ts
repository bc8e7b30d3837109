import { canonicalJson } from '../canonical-json.js';
import { jobKey, jobSeed } from '../job-identity.js';
import type { Point } from '../schemas/records.js';
import { fullParams, type PlannedJob } from '../sweep/expand.js';
import type { LoadedSweep } from '../sweep/load.js';
import { type Design, designTrials } from './design.js';
import type { TrialOutcome } from './sequential.js';
import { metricOutcome, sweepDesign } from './sweep-design.js';

/**
 * An adaptive sweep's design in terms of jobs: outcomes looked up by job key,
 * and each trial of the design as the job a plain sweep would make for the
 * same point and replicate (same key, same seed).
 */
export class AdaptiveJobs {
  private readonly params = new Map<string, Record<string, unknown>>();

  constructor(private readonly sweep: LoadedSweep) {}

  job(point: Point, replicate: number): PlannedJob {
    const id = canonicalJson(point);
    let params = this.params.get(id);
    if (params === undefined) {
      params = fullParams(this.sweep, point);
      this.params.set(id, params);
    }
    const key = jobKey(this.sweep.model.id, this.sweep.model.version, params, replicate);
    return { key, point, params, replicate, seed: jobSeed(this.sweep.spec.seed, key) };
  }

  /** The design given each finished job's metrics, by job key. */
  design(metricsByKey: ReadonlyMap<string, Readonly<Record<string, unknown>>>): Design {
    const metric = this.sweep.spec.refine!.metric;
    return sweepDesign(this.sweep, (point, replicate): TrialOutcome | undefined => {
      const metrics = metricsByKey.get(this.job(point, replicate).key);
      return metrics === undefined ? undefined : metricOutcome(metrics[metric]);
    });
  }

  /** Every job of a design. */
  *jobs(design: Design): Generator<PlannedJob> {
    for (const t of designTrials(design)) yield this.job(t.point, t.replicate);
  }
}
