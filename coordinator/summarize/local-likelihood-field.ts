import { BANDWIDTH_GRID, type BandwidthScore, selectBandwidth } from './bandwidth-selection.js';
import { fitLocal, type LocalResult } from './local-likelihood.js';
import { type BinomialPoint, prepareSmoothingData, type SmoothingData } from './local-likelihood-data.js';
import { KernelWindow } from './local-likelihood-kernel.js';

/** Fewer distinct sampled points than this: no smooth estimate, say why instead. */
export const MIN_POINTS = 10;

export interface SmoothingCounts {
  /** Distinct sampled locations with at least one trial (replicates pooled). */
  readonly points: number;
  readonly trials: number;
  readonly successes: number;
}

/** A smooth success probability on an nx x ny grid of cell centres over the unit square. */
export interface SmoothField {
  readonly ok: true;
  readonly counts: SmoothingCounts;
  /** The bandwidth used (unit-square coordinates). */
  readonly bandwidth: number;
  /** Cross-validated log-likelihood per candidate; empty when the bandwidth was given. */
  readonly curve: readonly BandwidthScore[];
  readonly nx: number;
  readonly ny: number;
  /**
   * Row by row, y outermost: entry j * nx + i is the cell centred at
   * x = (i + 0.5) / nx, y = (j + 0.5) / ny (the layout `isoLines` reads).
   * Null where there is no estimate (too few points nearby).
   */
  readonly p: readonly (number | null)[];
  /** 95% pointwise interval; the band where it contains 0.5 lies between the 0.5 iso-lines of `lo` and `hi`. */
  readonly lo: readonly (number | null)[];
  readonly hi: readonly (number | null)[];
  /** Everything known at each cell: method, fallback cause, effective points, standard error. */
  readonly estimates: readonly LocalResult[];
}

/** No smooth estimate for these points, with a reason a caption can show. */
export interface NoSmoothField {
  readonly ok: false;
  readonly counts: SmoothingCounts;
  readonly reason: string;
  readonly curve: readonly BandwidthScore[];
}

export interface SmoothFieldOptions {
  readonly nx: number;
  readonly ny: number;
  /** Use this bandwidth instead of choosing one by cross-validation. */
  readonly bandwidth?: number;
  /** Candidate bandwidths for cross-validation, ascending (default BANDWIDTH_GRID). */
  readonly candidates?: readonly number[];
  readonly minPoints?: number;
}

const plural = (n: number, word: string): string => `${n} ${word}${n === 1 ? '' : 's'}`;

/**
 * Why these points cannot give a smooth estimate, or null when they can.
 * Checked before any fitting, so the caller can print the reason instead of
 * a panel.
 */
export function smoothingObstacle(data: SmoothingData, minPoints: number = MIN_POINTS): string | null {
  const where = `${plural(data.totalTrials, 'trial')} at ${plural(data.count, 'point')}`;
  if (data.count === 0) return 'no trials to estimate from';
  if (data.count < minPoints) {
    return `too few points to estimate: ${plural(data.count, 'sampled point')}, at least ${minPoints} needed`;
  }
  if (data.totalSuccesses === data.totalTrials) return `every trial succeeded (${where})`;
  if (data.totalSuccesses === 0) return `every trial failed (${where})`;
  if (data.pointsWithSuccess < 2) return `successes at only one of ${plural(data.count, 'sampled point')}`;
  if (data.pointsWithFailure < 2) return `failures at only one of ${plural(data.count, 'sampled point')}`;
  return null;
}

/** Estimates at arbitrary query points (unit-square coordinates) with a given bandwidth. */
export function estimateAt(
  data: SmoothingData,
  bandwidth: number,
  queries: readonly { readonly x: number; readonly y: number }[],
): LocalResult[] {
  const win = new KernelWindow(data, bandwidth);
  return queries.map((q) => fitLocal(win, q.x, q.y));
}

/**
 * The smooth success probability of scattered binomial points on a grid:
 * guards, then the bandwidth by leave-one-out likelihood cross-validation
 * (unless given), then the local likelihood estimate at every cell centre.
 * Throws a RangeError on malformed points or grid sizes (caller bugs); poor
 * data gives `{ ok: false, reason }`.
 */
export function smoothSuccessField(
  points: readonly BinomialPoint[],
  options: SmoothFieldOptions,
): SmoothField | NoSmoothField {
  const { nx, ny } = options;
  if (!(Number.isInteger(nx) && nx >= 1 && Number.isInteger(ny) && ny >= 1)) {
    throw new RangeError(`smoothSuccessField: grid size must be positive integers, got ${nx} x ${ny}`);
  }
  const data = prepareSmoothingData(points);
  const counts = { points: data.count, trials: data.totalTrials, successes: data.totalSuccesses };
  const obstacle = smoothingObstacle(data, options.minPoints ?? MIN_POINTS);
  if (obstacle !== null) return { ok: false, counts, reason: obstacle, curve: [] };

  let bandwidth = options.bandwidth;
  let curve: readonly BandwidthScore[] = [];
  if (bandwidth === undefined) {
    const choice = selectBandwidth(data, options.candidates ?? BANDWIDTH_GRID);
    curve = choice.curve;
    if (choice.bandwidth === null) {
      return { ok: false, counts, reason: 'no candidate bandwidth predicts every left-out point', curve };
    }
    bandwidth = choice.bandwidth;
  }

  const win = new KernelWindow(data, bandwidth);
  const estimates: LocalResult[] = [];
  const p: (number | null)[] = [];
  const lo: (number | null)[] = [];
  const hi: (number | null)[] = [];
  // Newton starts from the neighbouring cell's fit: to the left, or below at a row's start.
  const start = new Float64Array(3).fill(Number.NaN);
  const rowStart = new Float64Array(3).fill(Number.NaN);
  for (let j = 0; j < ny; j++) {
    for (let i = 0; i < nx; i++) {
      if (i === 0) {
        start.set(rowStart);
        // The neighbour's local line predicts the logit here: a closer start.
        start[0] = (start[0] ?? 0) + ((start[2] ?? 0) * (1 / ny)) / bandwidth;
      } else start[0] = (start[0] ?? 0) + ((start[1] ?? 0) * (1 / nx)) / bandwidth;
      const fit = fitLocal(win, (i + 0.5) / nx, (j + 0.5) / ny, -1, start);
      if (i === 0) rowStart.set(start);
      estimates.push(fit);
      p.push(fit.ok ? fit.p : null);
      lo.push(fit.ok ? fit.lo : null);
      hi.push(fit.ok ? fit.hi : null);
    }
  }
  return { ok: true, counts, bandwidth, curve, nx, ny, p, lo, hi, estimates };
}
