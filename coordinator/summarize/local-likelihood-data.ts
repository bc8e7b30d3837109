import { z } from 'zod';

/**
 * One sampled point of a scattered sweep, in plot coordinates scaled to the
 * unit square (x = 0 at the left end of the axis range, 1 at the right; a
 * log-scaled axis is scaled in log space, see `unitCoordinate`), with the
 * trials run there and how many succeeded.
 */
export const BinomialPointSchema = z
  .object({
    x: z.number().min(0).max(1),
    y: z.number().min(0).max(1),
    trials: z.number().int().nonnegative(),
    successes: z.number().int().nonnegative(),
  })
  .refine((p) => p.successes <= p.trials, { message: 'successes must not exceed trials', path: ['successes'] });

export type BinomialPoint = z.infer<typeof BinomialPointSchema>;

const BinomialPointsSchema = z.array(BinomialPointSchema);

/**
 * The points a smoother works on: one entry per distinct location, replicates
 * pooled, points without trials dropped. Typed arrays because every local fit
 * walks them many times.
 */
export interface SmoothingData {
  readonly count: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly trials: Float64Array;
  readonly successes: Float64Array;
  readonly totalTrials: number;
  readonly totalSuccesses: number;
  /** Locations with at least one success / at least one failure. */
  readonly pointsWithSuccess: number;
  readonly pointsWithFailure: number;
}

/**
 * Validate the points, drop those without trials (they carry no information)
 * and pool entries at the same location into one point: replicates of a
 * sampled point are one observation for leave-one-out cross-validation, which
 * must leave out all of a location's trials at once. Throws a RangeError
 * naming the field on malformed input (a caller bug, not a data condition).
 */
export function prepareSmoothingData(points: readonly BinomialPoint[]): SmoothingData {
  const parsed = BinomialPointsSchema.safeParse(points);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const where = issue === undefined ? 'points' : ['points', ...issue.path.map(String)].join('.');
    throw new RangeError(`smoothing input: ${where}: ${issue?.message ?? 'invalid'}`);
  }
  const byLocation = new Map<string, { x: number; y: number; trials: number; successes: number }>();
  for (const p of parsed.data) {
    if (p.trials === 0) continue;
    const key = `${p.x}|${p.y}`;
    const seen = byLocation.get(key);
    if (seen === undefined) byLocation.set(key, { ...p });
    else {
      seen.trials += p.trials;
      seen.successes += p.successes;
    }
  }
  const pooled = [...byLocation.values()];
  const count = pooled.length;
  const data = {
    count,
    x: new Float64Array(count),
    y: new Float64Array(count),
    trials: new Float64Array(count),
    successes: new Float64Array(count),
    totalTrials: 0,
    totalSuccesses: 0,
    pointsWithSuccess: 0,
    pointsWithFailure: 0,
  };
  pooled.forEach((p, i) => {
    data.x[i] = p.x;
    data.y[i] = p.y;
    data.trials[i] = p.trials;
    data.successes[i] = p.successes;
    data.totalTrials += p.trials;
    data.totalSuccesses += p.successes;
    if (p.successes > 0) data.pointsWithSuccess += 1;
    if (p.successes < p.trials) data.pointsWithFailure += 1;
  });
  return data;
}

/**
 * A parameter value as a unit-square coordinate: 0 at `lo`, 1 at `hi`,
 * linear or in log space. Values outside the range are clamped, so a point
 * sampled at the very edge stays on the plot despite rounding.
 */
export function unitCoordinate(value: number, lo: number, hi: number, log: boolean): number {
  if (!(Number.isFinite(lo) && Number.isFinite(hi)) || !(hi > lo)) {
    throw new RangeError(`unitCoordinate needs a range lo < hi, got [${lo}, ${hi}]`);
  }
  if (log && !(lo > 0)) throw new RangeError(`a log-scaled range needs positive bounds, got [${lo}, ${hi}]`);
  const t = log ? (Math.log(value) - Math.log(lo)) / (Math.log(hi) - Math.log(lo)) : (value - lo) / (hi - lo);
  if (Number.isNaN(t)) throw new RangeError(`unitCoordinate: ${value} is not a number in [${lo}, ${hi}]`);
  return Math.min(1, Math.max(0, t));
}
