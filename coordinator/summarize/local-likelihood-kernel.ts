import type { SmoothingData } from './local-likelihood-data.js';

/**
 * The Gaussian kernel is cut off at this many bandwidths from the query
 * point. exp(-4^2 / 2) = 3.4e-4 of the central weight: a point beyond that
 * hardly moves a fit, and skipping it makes small bandwidths cheap.
 */
export const KERNEL_REACH = 4;

/** More buckets than this per axis cost more to walk than they save. */
const MAX_BUCKETS_PER_AXIS = 256;

/**
 * The points within reach of a query and their kernel weights, gathered into
 * scratch arrays that are reused from one fit to the next (no allocation in
 * the loops that run thousands of fits).
 *
 * Weight of point i at query q with bandwidth h: the product Gaussian kernel
 * exp(-(xi - qx)^2 / 2h^2) * exp(-(yi - qy)^2 / 2h^2), zero beyond
 * KERNEL_REACH * h (Euclidean distance). Offsets are stored in units of h
 * so the local design matrix [1, dx/h, dy/h] is well scaled at any bandwidth.
 */
export class KernelWindow {
  readonly bandwidth: number;
  /** Number of gathered points after the last `gather`. */
  size = 0;
  readonly index: Int32Array;
  readonly weight: Float64Array;
  readonly dx: Float64Array;
  readonly dy: Float64Array;
  readonly trials: Float64Array;
  readonly successes: Float64Array;

  private readonly data: SmoothingData;
  private readonly reach2: number;
  private readonly everywhere: boolean;
  private readonly buckets: number;
  private readonly bucketStart: Int32Array;
  private readonly bucketPoints: Int32Array;

  constructor(data: SmoothingData, bandwidth: number) {
    if (!(Number.isFinite(bandwidth) && bandwidth > 0)) {
      throw new RangeError(`bandwidth must be a positive number, got ${bandwidth}`);
    }
    this.data = data;
    this.bandwidth = bandwidth;
    const reach = KERNEL_REACH * bandwidth;
    this.reach2 = reach * reach;
    const n = data.count;
    this.index = new Int32Array(n);
    this.weight = new Float64Array(n);
    this.dx = new Float64Array(n);
    this.dy = new Float64Array(n);
    this.trials = new Float64Array(n);
    this.successes = new Float64Array(n);
    // Within the unit square every point is in reach when reach >= sqrt(2).
    this.everywhere = reach >= Math.SQRT2;
    this.buckets = this.everywhere ? 1 : Math.min(MAX_BUCKETS_PER_AXIS, Math.max(1, Math.floor(1 / reach)));
    // Counting sort of the points into square buckets at least `reach` wide,
    // so a query only needs the 3 x 3 buckets around its own.
    const b = this.buckets;
    this.bucketStart = new Int32Array(b * b + 1);
    this.bucketPoints = new Int32Array(n);
    const bucketOf = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      const bi = this.cell(data.x[i] ?? 0);
      const bj = this.cell(data.y[i] ?? 0);
      const id = bj * b + bi;
      bucketOf[i] = id;
      this.bucketStart[id + 1] = (this.bucketStart[id + 1] ?? 0) + 1;
    }
    for (let id = 0; id < b * b; id++) {
      this.bucketStart[id + 1] = (this.bucketStart[id + 1] ?? 0) + (this.bucketStart[id] ?? 0);
    }
    const fill = this.bucketStart.slice(0, b * b);
    for (let i = 0; i < n; i++) {
      const id = bucketOf[i] ?? 0;
      const at = fill[id] ?? 0;
      this.bucketPoints[at] = i;
      fill[id] = at + 1;
    }
  }

  private cell(coordinate: number): number {
    const c = Math.floor(coordinate * this.buckets);
    return c < 0 ? 0 : c >= this.buckets ? this.buckets - 1 : c;
  }

  /**
   * Gather the points within reach of (qx, qy), leaving out point `exclude`
   * (-1 for none). Returns the number gathered, also kept in `size`.
   */
  gather(qx: number, qy: number, exclude: number): number {
    const d = this.data;
    const h = this.bandwidth;
    const half = -0.5 / (h * h);
    let m = 0;
    const take = (i: number): void => {
      if (i === exclude) return;
      const ex = (d.x[i] ?? 0) - qx;
      const ey = (d.y[i] ?? 0) - qy;
      const r2 = ex * ex + ey * ey;
      if (r2 > this.reach2) return;
      this.index[m] = i;
      this.weight[m] = Math.exp(r2 * half);
      this.dx[m] = ex / h;
      this.dy[m] = ey / h;
      this.trials[m] = d.trials[i] ?? 0;
      this.successes[m] = d.successes[i] ?? 0;
      m += 1;
    };
    if (this.everywhere) {
      for (let i = 0; i < d.count; i++) take(i);
    } else {
      const b = this.buckets;
      const reach = Math.sqrt(this.reach2);
      const i0 = this.cell(qx - reach);
      const i1 = this.cell(qx + reach);
      const j0 = this.cell(qy - reach);
      const j1 = this.cell(qy + reach);
      for (let bj = j0; bj <= j1; bj++) {
        for (let bi = i0; bi <= i1; bi++) {
          const id = bj * b + bi;
          const end = this.bucketStart[id + 1] ?? 0;
          for (let s = this.bucketStart[id] ?? 0; s < end; s++) take(this.bucketPoints[s] ?? 0);
        }
      }
    }
    this.size = m;
    return m;
  }
}
