import { Z_95 } from '../../shared/wilson.js';
import type { KernelWindow } from './local-likelihood-kernel.js';

/**
 * Local likelihood estimate of a success probability on the plane (Loader
 * 1999, Local Regression and Likelihood, ch. 4): at a query point q the logit
 * of the success probability is modelled as linear in the offsets from q,
 *   logit p(x) = b0 + b1 (x1 - q1)/h + b2 (x2 - q2)/h,
 * and (b0, b1, b2) maximise the kernel-weighted binomial log-likelihood
 *   sum_i w_i [k_i eta_i - n_i log(1 + exp(eta_i))].
 * The estimate at q is p = expit(b0).
 *
 * Where that fit is ill-posed the estimate falls back to local constant, the
 * kernel-weighted success rate sum w k / sum w n (the same likelihood with
 * the logit constant). The rules, checked in this order:
 *   1. no point within reach, or fewer than MIN_EFFECTIVE_POINTS effective
 *      points: no estimate at all;
 *   2. fewer than MIN_EFFECTIVE_POINTS_LINEAR effective points: local constant
 *      (three coefficients need more than a couple of points);
 *   3. every trial within reach had the same outcome: local constant (the
 *      local logistic likelihood has no finite maximum);
 *   4. the points within reach are (nearly) on one line, so the local design
 *      [1, dx, dy] weighted by w n has no full rank: local constant;
 *   5. (near) separation: successes and failures within reach split by a
 *      line, so the local logistic likelihood has no finite maximum or one
 *      far out. Seen as the fitted logit at q passing +-MAX_ABS_LOGIT,
 *      Newton's method not converging within MAX_NEWTON_ITERATIONS, the
 *      information matrix turning singular, or no step that raises the
 *      likelihood: local constant.
 * "Effective points" is Kish's (sum w)^2 / sum w^2 over the points in reach.
 *
 * Intervals: local linear, logit(p) +- 1.96 se on the logit scale with the
 * sandwich standard error, mapped back with expit; local constant, the
 * Wilson score interval at Kish's effective number of trials.
 */

/** Below this many effective points there is no estimate at all. */
export const MIN_EFFECTIVE_POINTS = 2;
/** Below this many effective points the local logistic fit is not tried. */
export const MIN_EFFECTIVE_POINTS_LINEAR = 6;
export const MAX_NEWTON_ITERATIONS = 50;
/**
 * A local fit whose logit at the query passes +-10 (p outside [4.5e-5,
 * 1 - 4.5e-5]) is taken as (near) separation: running off to infinity, or
 * finite but resting on a handful of points and wildly overconfident. Such
 * fits would otherwise dominate the cross-validated likelihood with single
 * terms of -20 to -90 and make the bandwidth choice erratic.
 */
export const MAX_ABS_LOGIT = 10;
/**
 * Newton stops when no fitted logit in the window moves by more than this.
 * The step is still applied, and quadratic convergence leaves an error of
 * the order of its square.
 */
const STEP_TOLERANCE = 1e-7;
/** A design column explained by the others up to this fraction of its weight counts as collinear. */
const COLLINEAR = 1e-10;
const MAX_HALVINGS = 30;

export type LocalMethod = 'local-linear' | 'local-constant';
export type FallbackCause = 'few-effective-points' | 'one-outcome-nearby' | 'collinear-points' | 'separation';

/** An estimate at one query point. */
export interface LocalEstimate {
  readonly ok: true;
  /** Estimated success probability. */
  readonly p: number;
  /** 95% pointwise interval. */
  readonly lo: number;
  readonly hi: number;
  /** logit(p) and its standard error; null when p is exactly 0 or 1. */
  readonly logit: number | null;
  readonly seLogit: number | null;
  readonly method: LocalMethod;
  /** Why the local logistic fit was not used (null when it was). */
  readonly fallback: FallbackCause | null;
  /** Kish effective number of sampled points within reach. */
  readonly effectivePoints: number;
  /** Kish effective number of trials, (sum w n)^2 / sum w^2 n. */
  readonly effectiveTrials: number;
  /** Newton iterations spent (0 for local constant without a try). */
  readonly iterations: number;
}

/** No estimate at a query point, with a reason a caption can show. */
export interface NoLocalEstimate {
  readonly ok: false;
  readonly reason: string;
  readonly effectivePoints: number;
}

export type LocalResult = LocalEstimate | NoLocalEstimate;

/** Reasons, fixed strings so callers can group query points by them. */
export const NO_POINT_IN_REACH = 'no sampled point within reach of the kernel';
export const TOO_FEW_EFFECTIVE_POINTS = `fewer than ${MIN_EFFECTIVE_POINTS} effective sampled points nearby`;

const expit = (eta: number): number => (eta >= 0 ? 1 / (1 + Math.exp(-eta)) : Math.exp(eta) / (1 + Math.exp(eta)));

/**
 * Wilson score interval for a proportion p observed on `n` trials, n real:
 * used with Kish's effective number of trials for the local constant
 * estimate, whose variance is p(1 - p)/n_eff. Unlike a Wald interval it is
 * sensible at p = 0 and p = 1, where the fallback is mostly used.
 */
export function wilsonEffective(p: number, n: number, z: number = Z_95): { lo: number; hi: number } {
  const z2 = z * z;
  const denominator = 1 + z2 / n;
  const centre = (p + z2 / (2 * n)) / denominator;
  const half = (z * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n))) / denominator;
  return { lo: p === 0 ? 0 : Math.max(0, centre - half), hi: p === 1 ? 1 : Math.min(1, centre + half) };
}

/**
 * Scratch filled by `newtonPass`: gradient g (3), weighted information J
 * (6, upper triangle row by row), and K (6, same layout), the information
 * with squared kernel weights that the sandwich variance needs.
 */
const sums = new Float64Array(15);
/** Whether the last pass filled K. */
let hasK = false;

/**
 * One pass over the gathered points at coefficients (b0, b1, b2):
 *   g = sum w (k - n p) z,  J = sum w n p(1-p) z z^T,  K = sum w^2 n p(1-p) z z^T,
 * with z = (1, dx/h, dy/h); K only when asked (it is needed once, at the
 * end). No logarithms: the likelihood itself is only needed when a Newton
 * step has to be checked (see `logLikelihood`).
 */
function newtonPass(win: KernelWindow, b0: number, b1: number, b2: number, withK: boolean): void {
  let g0 = 0;
  let g1 = 0;
  let g2 = 0;
  let j00 = 0;
  let j01 = 0;
  let j02 = 0;
  let j11 = 0;
  let j12 = 0;
  let j22 = 0;
  let k00 = 0;
  let k01 = 0;
  let k02 = 0;
  let k11 = 0;
  let k12 = 0;
  let k22 = 0;
  const { weight, dx, dy, trials, successes } = win;
  const size = win.size;
  for (let i = 0; i < size; i++) {
    const w = weight[i] as number;
    const u = dx[i] as number;
    const v = dy[i] as number;
    const n = trials[i] as number;
    // exp overflows to Infinity for eta < -709, which still gives p = 0.
    const p = 1 / (1 + Math.exp(-(b0 + b1 * u + b2 * v)));
    const r = w * ((successes[i] as number) - n * p);
    g0 += r;
    g1 += r * u;
    g2 += r * v;
    const c = w * n * p * (1 - p);
    const cu = c * u;
    const cv = c * v;
    j00 += c;
    j01 += cu;
    j02 += cv;
    j11 += cu * u;
    j12 += cu * v;
    j22 += cv * v;
    if (withK) {
      const c2 = c * w;
      const c2u = c2 * u;
      const c2v = c2 * v;
      k00 += c2;
      k01 += c2u;
      k02 += c2v;
      k11 += c2u * u;
      k12 += c2u * v;
      k22 += c2v * v;
    }
  }
  sums[0] = g0;
  sums[1] = g1;
  sums[2] = g2;
  sums[3] = j00;
  sums[4] = j01;
  sums[5] = j02;
  sums[6] = j11;
  sums[7] = j12;
  sums[8] = j22;
  sums[9] = k00;
  sums[10] = k01;
  sums[11] = k02;
  sums[12] = k11;
  sums[13] = k12;
  sums[14] = k22;
  hasK = withK;
}

/** Kernel-weighted binomial log-likelihood sum w [k eta - n log(1 + e^eta)], up to a constant. */
function logLikelihood(win: KernelWindow, b0: number, b1: number, b2: number): number {
  let ll = 0;
  const { weight, dx, dy, trials, successes } = win;
  for (let i = 0; i < win.size; i++) {
    const eta = b0 + b1 * (dx[i] as number) + b2 * (dy[i] as number);
    // log(1 + exp(eta)) without overflow.
    const softplus = Math.max(eta, 0) + Math.log1p(Math.exp(-Math.abs(eta)));
    ll += (weight[i] as number) * ((successes[i] as number) * eta - (trials[i] as number) * softplus);
  }
  return ll;
}

/** Lower-triangular Cholesky factor of a 3 x 3 symmetric matrix, or null when (nearly) singular. */
function cholesky3(a00: number, a01: number, a02: number, a11: number, a12: number, a22: number): number[] | null {
  if (!(a00 > 0)) return null;
  const l00 = Math.sqrt(a00);
  const l10 = a01 / l00;
  const l20 = a02 / l00;
  const d11 = a11 - l10 * l10;
  if (!(d11 > COLLINEAR * a11)) return null;
  const l11 = Math.sqrt(d11);
  const l21 = (a12 - l20 * l10) / l11;
  const d22 = a22 - l20 * l20 - l21 * l21;
  if (!(d22 > COLLINEAR * a22)) return null;
  return [l00, l10, l11, l20, l21, Math.sqrt(d22)];
}

/** Solve L L^T x = b for the factor from cholesky3. */
function solve3(l: readonly number[], b0: number, b1: number, b2: number): [number, number, number] {
  const [l00 = 1, l10 = 0, l11 = 1, l20 = 0, l21 = 0, l22 = 1] = l;
  const y0 = b0 / l00;
  const y1 = (b1 - l10 * y0) / l11;
  const y2 = (b2 - l20 * y0 - l21 * y1) / l22;
  const x2 = y2 / l22;
  const x1 = (y1 - l21 * x2) / l11;
  const x0 = (y0 - l10 * x1 - l20 * x2) / l00;
  return [x0, x1, x2];
}

/**
 * Standard error of b0 by the sandwich J^-1 K J^-1 (Loader 1999, ch. 4),
 * from the factor of J and the K last filled into `sums`: the kernel weights
 * are not frequencies, so the inverse weighted information J^-1 alone would
 * misstate the precision.
 */
function sandwichSe(jFactor: readonly number[]): number | null {
  // a = J^-1 e0; var(b0) = a^T K a.
  const [a0, a1, a2] = solve3(jFactor, 1, 0, 0);
  const [k00, k01, k02, k11, k12, k22] = [sums[9], sums[10], sums[11], sums[12], sums[13], sums[14]] as number[];
  const variance =
    a0 * a0 * (k00 ?? 0) +
    a1 * a1 * (k11 ?? 0) +
    a2 * a2 * (k22 ?? 0) +
    2 * (a0 * a1 * (k01 ?? 0) + a0 * a2 * (k02 ?? 0) + a1 * a2 * (k12 ?? 0));
  return variance > 0 ? Math.sqrt(variance) : null;
}

/** Kernel-weighted sums over the gathered points. */
interface WindowTotals {
  sumW: number;
  sumW2: number;
  sumWN: number;
  sumW2N: number;
  sumWK: number;
  /** Trial-weighted moments of the offsets: is the local design of full rank? */
  sumWNU: number;
  sumWNV: number;
  sumWNUU: number;
  sumWNUV: number;
  sumWNVV: number;
  /** Largest |offset| in bandwidths along each axis (at most KERNEL_REACH). */
  maxU: number;
  maxV: number;
}

function windowTotals(win: KernelWindow): WindowTotals {
  const t = {
    sumW: 0,
    sumW2: 0,
    sumWN: 0,
    sumW2N: 0,
    sumWK: 0,
    sumWNU: 0,
    sumWNV: 0,
    sumWNUU: 0,
    sumWNUV: 0,
    sumWNVV: 0,
    maxU: 0,
    maxV: 0,
  };
  for (let i = 0; i < win.size; i++) {
    const w = win.weight[i] as number;
    const n = win.trials[i] as number;
    const u = win.dx[i] as number;
    const v = win.dy[i] as number;
    const wn = w * n;
    t.sumW += w;
    t.sumW2 += w * w;
    t.sumWN += wn;
    t.sumW2N += wn * w;
    t.sumWK += w * (win.successes[i] as number);
    t.sumWNU += wn * u;
    t.sumWNV += wn * v;
    t.sumWNUU += wn * u * u;
    t.sumWNUV += wn * u * v;
    t.sumWNVV += wn * v * v;
    t.maxU = Math.max(t.maxU, Math.abs(u));
    t.maxV = Math.max(t.maxV, Math.abs(v));
  }
  return t;
}

function localConstant(
  t: WindowTotals,
  effectivePoints: number,
  fallback: FallbackCause,
  iterations: number,
): LocalEstimate {
  const p = t.sumWK / t.sumWN;
  const effectiveTrials = (t.sumWN * t.sumWN) / t.sumW2N;
  const { lo, hi } = wilsonEffective(p, effectiveTrials);
  const interior = p > 0 && p < 1;
  return {
    ok: true,
    p,
    lo,
    hi,
    logit: interior ? Math.log(p / (1 - p)) : null,
    // The sandwich of the constant-logit fit: K / J^2 = 1 / (n_eff p (1 - p)).
    seLogit: interior ? 1 / Math.sqrt(effectiveTrials * p * (1 - p)) : null,
    method: 'local-constant',
    fallback,
    effectivePoints,
    effectiveTrials,
    iterations,
  };
}

/** Below this step size (logit units) a Newton step is taken without checking the likelihood. */
const SMALL_STEP = 1e-3;
/** After a step this small, Newton's quadratic convergence makes the next pass most likely the last. */
const NEARLY_DONE = 1e-3;

/**
 * The estimate at (qx, qy) from the points the window gathers there, leaving
 * out point `exclude` (-1: none; cross-validation leaves out one location).
 *
 * `start`, when given, holds coefficients to start Newton's method from (a
 * neighbouring fit: fewer iterations); it is overwritten with this fit's
 * coefficients, or NaN when the fit is not local linear. The estimate does
 * not depend on the start beyond the convergence tolerance.
 */
export function fitLocal(
  win: KernelWindow,
  qx: number,
  qy: number,
  exclude = -1,
  start: Float64Array | null = null,
): LocalResult {
  const warm = start !== null && Number.isFinite(start[0]) && Number.isFinite(start[1]) && Number.isFinite(start[2]);
  const s0 = warm ? (start[0] as number) : 0;
  const s1 = warm ? (start[1] as number) : 0;
  const s2 = warm ? (start[2] as number) : 0;
  if (start !== null) start[0] = Number.NaN;
  win.gather(qx, qy, exclude);
  if (win.size === 0) return { ok: false, reason: NO_POINT_IN_REACH, effectivePoints: 0 };
  const t = windowTotals(win);
  const effectivePoints = (t.sumW * t.sumW) / t.sumW2;
  if (!(effectivePoints >= MIN_EFFECTIVE_POINTS)) {
    return { ok: false, reason: TOO_FEW_EFFECTIVE_POINTS, effectivePoints };
  }
  if (effectivePoints < MIN_EFFECTIVE_POINTS_LINEAR) {
    return localConstant(t, effectivePoints, 'few-effective-points', 0);
  }
  const pBar = t.sumWK / t.sumWN;
  if (!(pBar > 0 && pBar < 1)) return localConstant(t, effectivePoints, 'one-outcome-nearby', 0);
  if (cholesky3(t.sumWN, t.sumWNU, t.sumWNV, t.sumWNUU, t.sumWNUV, t.sumWNVV) === null) {
    return localConstant(t, effectivePoints, 'collinear-points', 0);
  }

  let b0 = warm ? s0 : Math.log(pBar / (1 - pBar));
  let b1 = s1;
  let b2 = s2;
  newtonPass(win, b0, b1, b2, false);
  for (let iteration = 1; iteration <= MAX_NEWTON_ITERATIONS; iteration++) {
    const l = cholesky3(sums[3] ?? 0, sums[4] ?? 0, sums[5] ?? 0, sums[6] ?? 0, sums[7] ?? 0, sums[8] ?? 0);
    // The design has full rank (checked above), so a singular information
    // means fitted probabilities of 0 or 1: a fit running off to infinity.
    if (l === null) return localConstant(t, effectivePoints, 'separation', iteration);
    const [d0, d1, d2] = solve3(l, sums[0] ?? 0, sums[1] ?? 0, sums[2] ?? 0);
    // Step size as the most any fitted logit in the window moves: a scale
    // that does not depend on the bandwidth the slopes are measured in.
    const size = Math.abs(d0) + Math.abs(d1) * t.maxU + Math.abs(d2) * t.maxV;
    if (size < STEP_TOLERANCE) {
      // J and K at b differ from those at b + d by O(1e-7) relative: good enough for an interval.
      let factor: number[] | null = l;
      if (!hasK) {
        newtonPass(win, b0, b1, b2, true);
        factor = cholesky3(sums[3] ?? 0, sums[4] ?? 0, sums[5] ?? 0, sums[6] ?? 0, sums[7] ?? 0, sums[8] ?? 0);
      }
      const se = factor === null ? null : sandwichSe(factor);
      b0 += d0;
      b1 += d1;
      b2 += d2;
      if (se === null) return localConstant(t, effectivePoints, 'separation', iteration);
      if (start !== null) {
        start[0] = b0;
        start[1] = b1;
        start[2] = b2;
      }
      return {
        ok: true,
        p: expit(b0),
        lo: expit(b0 - Z_95 * se),
        hi: expit(b0 + Z_95 * se),
        logit: b0,
        seLogit: se,
        method: 'local-linear',
        fallback: null,
        effectivePoints,
        effectiveTrials: (t.sumWN * t.sumWN) / t.sumW2N,
        iterations: iteration,
      };
    }
    // The likelihood is concave, so if it still rises at the end of the full
    // step (gradient there points along the step) it rose all the way: accept
    // without computing it. Otherwise halve the step until it does not drop.
    // Near the maximum the next pass is likely the last: collect K with it.
    const nearlyDone = size < NEARLY_DONE;
    newtonPass(win, b0 + d0, b1 + d1, b2 + d2, nearlyDone);
    let step = 1;
    if (size >= SMALL_STEP && (sums[0] ?? 0) * d0 + (sums[1] ?? 0) * d1 + (sums[2] ?? 0) * d2 < 0) {
      const before = logLikelihood(win, b0, b1, b2);
      const tolerance = 1e-12 * Math.abs(before);
      let halvings = 0;
      while (logLikelihood(win, b0 + step * d0, b1 + step * d1, b2 + step * d2) < before - tolerance) {
        halvings += 1;
        if (halvings > MAX_HALVINGS) return localConstant(t, effectivePoints, 'separation', iteration);
        step /= 2;
      }
      if (step < 1) newtonPass(win, b0 + step * d0, b1 + step * d1, b2 + step * d2, nearlyDone);
    }
    b0 += step * d0;
    b1 += step * d1;
    b2 += step * d2;
    if (Math.abs(b0) > MAX_ABS_LOGIT) return localConstant(t, effectivePoints, 'separation', iteration);
  }
  return localConstant(t, effectivePoints, 'separation', MAX_NEWTON_ITERATIONS);
}
