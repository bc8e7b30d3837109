import { fitLocal } from './local-likelihood.js';
import type { SmoothingData } from './local-likelihood-data.js';
import { KernelWindow } from './local-likelihood-kernel.js';

/**
 * Candidate bandwidths, in unit-square coordinates: ten per decade from 0.02
 * to 1, 10^(-k/10) for k = 17 down to 0, ascending. 0.02 suits a few
 * thousand points; at 1 the kernel weights vary only between 1 and 0.37 over
 * the square, so the local logistic fit is close to one global logistic plane.
 */
export const BANDWIDTH_GRID: readonly number[] = Array.from({ length: 18 }, (_, i) => 10 ** (-(17 - i) / 10));

/**
 * At most this many locations are left out in turn. Beyond it a fixed,
 * evenly strided subset of the locations (in input order) is left out, each
 * still estimated from all the others: at large bandwidths every fit walks
 * every point, so the full leave-one-out sum costs n^2 per candidate.
 */
export const MAX_LEFT_OUT = 1000;

/** The locations left out in turn: all of them, or MAX_LEFT_OUT evenly strided ones. */
export function leftOutLocations(count: number, max: number = MAX_LEFT_OUT): Int32Array {
  if (count <= max) return Int32Array.from({ length: count }, (_, i) => i);
  return Int32Array.from({ length: max }, (_, i) => Math.floor((i * count) / max));
}

/** Cross-validated likelihood of one candidate bandwidth. */
export interface BandwidthScore {
  readonly bandwidth: number;
  /**
   * Sum over sampled points of the binomial log-likelihood log C(n, k) +
   * k log p + (n - k) log(1 - p) of the point's trials, p estimated without
   * that point. Null when some left-out point has no estimate or is given
   * probability 0 of an outcome it had (the sum would be minus infinity).
   */
  readonly logLikelihood: number | null;
  readonly reason: string | null;
  /**
   * Left-out points estimated by the local logistic fit (the others by local
   * constant); for a null score, those counted before the sum was abandoned.
   */
  readonly localLinear: number;
  /** How many locations were left out in turn (all, or MAX_LEFT_OUT). */
  readonly leftOut: number;
}

export interface BandwidthChoice {
  /** The best candidate, or null when no candidate could predict every left-out point. */
  readonly bandwidth: number | null;
  readonly curve: readonly BandwidthScore[];
}

/**
 * Newton starting points for the left-out fits, one triple per location,
 * carried from one candidate bandwidth to the next: the fit at a nearby
 * bandwidth converges in fewer steps. NaN means "start cold".
 */
export interface NewtonStarts {
  bandwidth: number | null;
  readonly coefficients: Float64Array;
}

/** log(i!) for i = 0..max, summed exactly enough for counts of trials. */
function logFactorials(max: number): Float64Array {
  const table = new Float64Array(max + 1);
  for (let i = 2; i <= max; i++) table[i] = (table[i - 1] ?? 0) + Math.log(i);
  return table;
}

/**
 * Leave-one-out cross-validated log-likelihood at one bandwidth: each sampled
 * location is left out with all its trials, estimated from the others, and
 * scored by the binomial likelihood of its own trials (Loader 1999, ch. 4,
 * likelihood cross-validation).
 */
export function looLogLikelihood(
  data: SmoothingData,
  bandwidth: number,
  starts: NewtonStarts | null = null,
  leftOut: Int32Array = leftOutLocations(data.count),
): BandwidthScore {
  const win = new KernelWindow(data, bandwidth);
  // Coefficient offsets are in bandwidths, so slopes carry over scaled by h'/h.
  const rescale = starts !== null && starts.bandwidth !== null ? bandwidth / starts.bandwidth : 1;
  if (starts !== null) {
    for (let i = 0; i < data.count; i++) {
      starts.coefficients[3 * i + 1] = (starts.coefficients[3 * i + 1] ?? 0) * rescale;
      starts.coefficients[3 * i + 2] = (starts.coefficients[3 * i + 2] ?? 0) * rescale;
    }
    starts.bandwidth = bandwidth;
  }
  let maxTrials = 0;
  for (let i = 0; i < data.count; i++) maxTrials = Math.max(maxTrials, data.trials[i] ?? 0);
  const lf = logFactorials(maxTrials);
  let sum = 0;
  let localLinear = 0;
  const base = { bandwidth, leftOut: leftOut.length };
  for (const i of leftOut) {
    const start = starts === null ? null : starts.coefficients.subarray(3 * i, 3 * i + 3);
    const fit = fitLocal(win, data.x[i] ?? 0, data.y[i] ?? 0, i, start);
    if (!fit.ok) {
      return { ...base, logLikelihood: null, reason: `a left-out point has no estimate: ${fit.reason}`, localLinear };
    }
    if (fit.method === 'local-linear') localLinear += 1;
    const n = data.trials[i] ?? 0;
    const k = data.successes[i] ?? 0;
    // log p and log(1 - p) from the logit where there is one: accurate near 0 and 1.
    let logP: number;
    let logQ: number;
    if (fit.logit !== null) {
      logP = -Math.log1p(Math.exp(-fit.logit));
      logQ = -Math.log1p(Math.exp(fit.logit));
    } else {
      logP = Math.log(fit.p);
      logQ = Math.log(1 - fit.p);
    }
    const term = (k > 0 ? k * logP : 0) + (n - k > 0 ? (n - k) * logQ : 0);
    if (!Number.isFinite(term)) {
      return {
        ...base,
        logLikelihood: null,
        reason: 'a left-out point was given probability 0 of an outcome it had',
        localLinear,
      };
    }
    sum += term + (lf[n] ?? 0) - (lf[k] ?? 0) - (lf[n - k] ?? 0);
  }
  return { ...base, logLikelihood: sum, reason: null, localLinear };
}

/**
 * The candidate with the largest cross-validated log-likelihood over the
 * whole grid; on an exact tie the larger bandwidth (the smoother estimate)
 * wins. Deterministic: no random splits, a fixed grid, a fixed order. (The
 * curve need not have one peak: it can dip and rise again towards a nearly
 * global fit, so the grid is never cut short.)
 */
export function selectBandwidth(data: SmoothingData, grid: readonly number[] = BANDWIDTH_GRID): BandwidthChoice {
  for (let i = 1; i < grid.length; i++) {
    if (!((grid[i] ?? 0) > (grid[i - 1] ?? 0))) throw new RangeError('candidate bandwidths must be ascending');
  }
  const starts: NewtonStarts = { bandwidth: null, coefficients: new Float64Array(3 * data.count).fill(Number.NaN) };
  const leftOut = leftOutLocations(data.count);
  const curve = grid.map((h) => looLogLikelihood(data, h, starts, leftOut));
  let best: BandwidthScore | null = null;
  for (const score of curve) {
    if (score.logLikelihood === null) continue;
    // Ascending grid: >= lets the larger bandwidth win a tie.
    if (best === null || best.logLikelihood === null || score.logLikelihood >= best.logLikelihood) best = score;
  }
  return { bandwidth: best?.bandwidth ?? null, curve };
}
