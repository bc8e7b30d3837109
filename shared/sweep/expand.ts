import { invalidInput, issuesFromZod } from '../errors.js';
import { derivePoint } from '../formula/derive-point.js';
import { jobKeyAt, jobKeyPrefix, jobSeed } from '../job-identity.js';
import type { JobPayload, Point } from '../schemas/records.js';
import { checkJobLimit } from './job-limit.js';
import type { LoadedSweep } from './load.js';
import { iteratePoints } from './points.js';

export interface PlannedJob {
  readonly key: string;
  readonly point: Point;
  /** Full resolved parameters (model defaults + fixed + point), as the key saw them. */
  readonly params: Readonly<Record<string, unknown>>;
  readonly replicate: number;
  readonly seed: number;
}

export function countJobs(sweep: LoadedSweep): number {
  return sweep.pointCount * sweep.spec.replicates;
}

/** Values of the computed parameters at one point (empty without a `derived` section). */
export function computedParams(sweep: LoadedSweep, point: Point): Readonly<Record<string, number>> {
  if (sweep.derived === undefined) return {};
  const d = derivePoint(sweep.derived, sweep.spec.fixed, point);
  if (!d.success) {
    throw invalidInput(`point ${JSON.stringify(point)} is not valid for model ${sweep.model.id}`, [
      { path: `derived.${d.name}`, message: d.message },
    ]);
  }
  return d.computed;
}

/**
 * Full parameters of one point through the model's schema (defaults filled
 * in): model defaults + fixed + the point + computed parameters, or
 * undefined when a formula fails or the model refuses them. Computed values
 * are plain numbers here, so jobs and workers need nothing new.
 */
export function resolveParams(sweep: LoadedSweep, point: Point): Record<string, unknown> | undefined {
  let input: Record<string, unknown> = { ...sweep.spec.fixed, ...point };
  if (sweep.derived !== undefined) {
    const d = derivePoint(sweep.derived, sweep.spec.fixed, point);
    if (!d.success) return undefined;
    input = d.input;
  }
  const parsed = sweep.model.params.safeParse(input);
  return parsed.success ? (parsed.data as Record<string, unknown>) : undefined;
}

/**
 * The parameters a job of a refused point carries: what the file gives, with
 * the computed values; a computed parameter whose formula failed is null, so
 * the model refuses the job as it would any other bad value (a job must
 * never run with a default in place of a failed formula).
 */
function refusedParams(sweep: LoadedSweep, point: Point): Record<string, unknown> {
  if (sweep.derived === undefined) return { ...sweep.spec.fixed, ...point };
  const d = derivePoint(sweep.derived, sweep.spec.fixed, point);
  return d.success ? d.input : { ...sweep.spec.fixed, ...point, [d.name]: null };
}

/** As resolveParams, but an InputError naming the field when the point is refused. */
export function fullParams(sweep: LoadedSweep, point: Point): Record<string, unknown> {
  const parsed = sweep.model.params.safeParse({ ...sweep.spec.fixed, ...point, ...computedParams(sweep, point) });
  if (!parsed.success) {
    throw invalidInput(
      `point ${JSON.stringify(point)} is not valid for model ${sweep.model.id}`,
      issuesFromZod(parsed.error.issues, 'params'),
    );
  }
  return parsed.data as Record<string, unknown>;
}

/**
 * Points x replicates, lazily: point by point, replicates 0..R-1 of a point
 * next to each other. A million-job sweep never exists in memory at once.
 */
export function* expandJobs(sweep: LoadedSweep): Generator<PlannedJob> {
  const { model, spec } = sweep;
  // The key text of a point is built once and serves every replicate (see jobKeyPrefix).
  for (const point of iteratePoints(sweep)) {
    // A large sweep has only a selection of its points checked while loading
    // (see check-points.ts). A point the model refuses still becomes jobs,
    // with the parameters as written, so the job runner fails them as
    // invalid and records why, and every other job runs.
    const params = resolveParams(sweep, point) ?? refusedParams(sweep, point);
    const prefix = jobKeyPrefix(model.id, model.version, params);
    for (let replicate = 0; replicate < spec.replicates; replicate++) {
      const key = jobKeyAt(prefix, replicate);
      yield { key, point, params, replicate, seed: jobSeed(spec.seed, key) };
    }
  }
}

/** What a worker needs to run one job without sweep.json. */
export function toPayload(sweep: LoadedSweep, job: PlannedJob): JobPayload {
  return {
    v: 1,
    sweep: { name: sweep.spec.name, hash: sweep.hash },
    key: job.key,
    model: sweep.model.id,
    modelVersion: sweep.model.version,
    params: { ...job.params },
    point: { ...job.point },
    replicate: job.replicate,
    seed: job.seed,
    rootSeed: sweep.spec.seed,
    ...(sweep.spec.jobTimeoutMs === undefined ? {} : { timeoutMs: sweep.spec.jobTimeoutMs }),
  };
}

/** InputError when the sweep has more jobs than `limit` (the CLI skips this with --yes). */
export function assertJobLimit(sweep: LoadedSweep, limit: number): void {
  checkJobLimit(countJobs(sweep), limit);
}
