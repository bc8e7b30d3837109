import type { BcpnnParams, ResolvedShape } from './params.js';
import type { PatternSet } from './patterns.js';

/**
 * Training in closed form (docs/performance.md).
 *
 * During training the clamped activity is always 0 or the unit vector of a
 * stored pattern, and every trace starts at 0, so every trace stays a linear
 * combination of the nP distinct pattern vectors x_k:
 *   zPre = sum_k zPre_k x_k,  pJoint = sum_{k,l} C[k][l] x_k x_l^T.
 * We evolve these coefficients (nP and nP^2 numbers) instead of N and N^2
 * unit values, one whole constant segment at a time.
 *
 * Units that belong to the same set of patterns are indistinguishable: they
 * share pPre, pPost, bias and every weight. They form a "class"; the trained
 * network is a G x G class weight matrix plus the class of every unit.
 */
export interface TrainedNetwork {
  readonly N: number;
  /** Number of unit classes. */
  readonly G: number;
  /** classOf[i] in [0, G). */
  readonly classOf: Int32Array;
  /** Class weights, row-major: classWeights[g * G + g'] = w between a unit of class g (post) and one of g' (pre). */
  readonly classWeights: Float64Array;
  readonly classBias: Float64Array;
  readonly classPPre: Float64Array;
  readonly classPPost: Float64Array;
  /**
   * The pattern ids each class belongs to, and the nP x nP pattern joint
   * coefficients: enough to give any class pJoint (classJoint) without
   * keeping a second G x G matrix next to the weights.
   */
  readonly classPatterns: readonly (readonly number[])[];
  readonly patternPJoint: Float64Array;
  readonly nP: number;
}

/** pJoint between a unit of class g (post) and one of class g2 (pre). */
export function classJoint(net: TrainedNetwork, g: number, g2: number): number {
  const { classPatterns, patternPJoint, nP } = net;
  let sum = 0;
  for (const kk of classPatterns[g] as number[])
    for (const l of classPatterns[g2] as number[]) sum += patternPJoint[kk * nP + l] as number;
  return sum;
}

/** Segments at most this long use the exact scalar recurrence; longer ones the closed form. */
const LOOP_LIMIT = 4096;

/**
 * Weighted sums over one segment of T steps, n = 1..T, weights c^(T-n):
 * with u_i = 1 - r_i^n (the part of z_i that has moved to o) and
 * v_i = r_i^n (the part left of the start value).
 */
interface SegmentSums {
  cT: number;
  /** sum c^(T-n) u2 u1, u2 v1, v2 u1, v2 v1 */
  A: number;
  B: number;
  C: number;
  D: number;
  /** sum c^(T-n) u1, v1, u2, v2 */
  E1: number;
  F1: number;
  E2: number;
  F2: number;
  r1T: number;
  r2T: number;
}

/**
 * sum_{n=1..T} c^(T-n) q^n, for 0 <= c, q < =1, computed without cancellation:
 * = q * b^(T-1) * sum_{m<T} rho^m with b = max(c, q), rho = min/max.
 */
export function geometricSum(c: number, q: number, T: number): number {
  if (T <= 0) return 0;
  const b = Math.max(c, q);
  if (b === 0) return 0;
  const s = Math.min(c, q);
  const rho = s / b;
  let geo: number;
  if (rho === 1) geo = T;
  else if (rho === 0) geo = 1;
  else {
    const lr = Math.log1p((s - b) / b);
    geo = Math.expm1(T * lr) / Math.expm1(lr);
  }
  return q * b ** (T - 1) * geo;
}

function segmentSums(T: number, r1: number, r2: number, c: number, out: SegmentSums): void {
  if (T <= LOOP_LIMIT) {
    let A = 0,
      B = 0,
      C = 0,
      D = 0,
      E1 = 0,
      F1 = 0,
      E2 = 0,
      F2 = 0;
    let q1 = 1,
      q2 = 1,
      cT = 1;
    for (let n = 1; n <= T; n++) {
      q1 *= r1;
      q2 *= r2;
      cT *= c;
      const u1 = 1 - q1;
      const u2 = 1 - q2;
      A = c * A + u2 * u1;
      B = c * B + u2 * q1;
      C = c * C + q2 * u1;
      D = c * D + q2 * q1;
      E1 = c * E1 + u1;
      F1 = c * F1 + q1;
      E2 = c * E2 + u2;
      F2 = c * F2 + q2;
    }
    Object.assign(out, { cT, A, B, C, D, E1, F1, E2, F2, r1T: q1, r2T: q2 });
    return;
  }
  const S1 = geometricSum(c, 1, T);
  const Sr1 = geometricSum(c, r1, T);
  const Sr2 = geometricSum(c, r2, T);
  const Sr12 = geometricSum(c, r1 * r2, T);
  Object.assign(out, {
    cT: c ** T,
    A: S1 - Sr1 - Sr2 + Sr12,
    B: Sr1 - Sr12,
    C: Sr2 - Sr12,
    D: Sr12,
    E1: S1 - Sr1,
    F1: Sr1,
    E2: S1 - Sr2,
    F2: Sr2,
    r1T: r1 ** T,
    r2T: r2 ** T,
  });
}

/** Probability traces as coefficients over the distinct patterns. */
export interface PatternTraces {
  readonly nP: number;
  readonly pPre: Float64Array;
  readonly pPost: Float64Array;
  /** nP x nP, [k * nP + l]: k post, l pre. */
  readonly pJoint: Float64Array;
}

/** Run the training protocol on pattern coefficients, one segment at a time. */
export function trainPatternTraces(set: PatternSet, p: BcpnnParams, shape: ResolvedShape): PatternTraces {
  const nP = set.patterns.length;
  const zPre = new Float64Array(nP);
  const zPost = new Float64Array(nP);
  const pPre = new Float64Array(nP);
  const pPost = new Float64Array(nP);
  const pJoint = new Float64Array(nP * nP);
  const r1 = 1 - p.dt / p.tauZPre;
  const r2 = 1 - p.dt / p.tauZPost;
  const a = p.dt / p.tauP;
  const c = 1 - a;
  const sums: SegmentSums = { cT: 0, A: 0, B: 0, C: 0, D: 0, E1: 0, F1: 0, E2: 0, F2: 0, r1T: 0, r2T: 0 };
  // Segment sums depend only on T: cache the few distinct lengths.
  const cache = new Map<number, SegmentSums>();
  const sumsFor = (T: number): SegmentSums => {
    let hit = cache.get(T);
    if (hit === undefined) {
      segmentSums(T, r1, r2, c, sums);
      hit = { ...sums };
      cache.set(T, hit);
    }
    return hit;
  };

  /** One segment of T steps with o = x_on (on >= 0) or o = 0 (on = -1). */
  const segment = (on: number, T: number): void => {
    if (T <= 0) return;
    const S = sumsFor(T);
    // pJoint_T = c^T P0 + a [A o o^T + B o z1^T + C z2 o^T + D z2 z1^T], z1 = zPre0, z2 = zPost0.
    for (let kk = 0; kk < nP; kk++) {
      const row = kk * nP;
      const z2 = zPost[kk] as number;
      const dz = a * S.D * z2;
      for (let l = 0; l < nP; l++) pJoint[row + l] = S.cT * (pJoint[row + l] as number) + dz * (zPre[l] as number);
    }
    if (on >= 0) {
      const row = on * nP;
      for (let l = 0; l < nP; l++) pJoint[row + l] = (pJoint[row + l] as number) + a * S.B * (zPre[l] as number);
      for (let kk = 0; kk < nP; kk++)
        pJoint[kk * nP + on] = (pJoint[kk * nP + on] as number) + a * S.C * (zPost[kk] as number);
      pJoint[row + on] = (pJoint[row + on] as number) + a * S.A;
    }
    for (let kk = 0; kk < nP; kk++) {
      pPre[kk] = S.cT * (pPre[kk] as number) + a * S.F1 * (zPre[kk] as number);
      pPost[kk] = S.cT * (pPost[kk] as number) + a * S.F2 * (zPost[kk] as number);
      zPre[kk] = (zPre[kk] as number) * S.r1T;
      zPost[kk] = (zPost[kk] as number) * S.r2T;
    }
    if (on >= 0) {
      pPre[on] = (pPre[on] as number) + a * S.E1;
      pPost[on] = (pPost[on] as number) + a * S.E2;
      zPre[on] = (zPre[on] as number) + (1 - S.r1T);
      zPost[on] = (zPost[on] as number) + (1 - S.r2T);
    }
  };

  for (let epoch = 0; epoch < p.epochs; epoch++) {
    for (const ids of set.ids) {
      for (const id of ids) {
        segment(id, shape.nPattern);
        segment(-1, shape.nGap);
      }
      segment(-1, shape.nRest);
    }
  }
  return { nP, pPre, pPost, pJoint };
}

/**
 * Units grouped by the set of patterns they belong to: classOf[i] is unit i's
 * class, classSets[g] the patterns of class g, numbered in order of first unit.
 */
export function unitClasses(
  set: PatternSet,
  shape: ResolvedShape,
): { readonly classOf: Int32Array; readonly classSets: number[][] } {
  const { H, M, N } = shape;
  const members: number[][] = Array.from({ length: N }, () => []);
  set.patterns.forEach((pattern, id) => {
    for (let h = 0; h < H; h++) members[h * M + (pattern[h] as number)]?.push(id);
  });
  const classKey = new Map<string, number>();
  const classSets: number[][] = [];
  const classOf = new Int32Array(N);
  for (let i = 0; i < N; i++) {
    const list = members[i] as number[];
    const key = list.join(',');
    let g = classKey.get(key);
    if (g === undefined) {
      g = classSets.length;
      classKey.set(key, g);
      classSets.push(list);
    }
    classOf[i] = g;
  }
  return { classOf, classSets };
}

/** Group units by the set of patterns they belong to and form the class weights. */
export function buildNetwork(
  set: PatternSet,
  traces: PatternTraces,
  p: BcpnnParams,
  shape: ResolvedShape,
): TrainedNetwork {
  const { classOf, classSets } = unitClasses(set, shape);
  const N = shape.N;
  const G = classSets.length;
  const nP = traces.nP;
  const classPPre = new Float64Array(G);
  const classPPost = new Float64Array(G);
  for (let g = 0; g < G; g++) {
    for (const kk of classSets[g] as number[]) {
      classPPre[g] = (classPPre[g] as number) + (traces.pPre[kk] as number);
      classPPost[g] = (classPPost[g] as number) + (traces.pPost[kk] as number);
    }
  }
  // The class pJoint is summed and turned into the weight in one pass: the
  // only G x G array is the weights (200 MB at the cap G = 5000, not 400).
  const eps = p.eps;
  const eps2 = eps * eps;
  const classWeights = new Float64Array(G * G);
  const classBias = new Float64Array(G);
  const pJoint = traces.pJoint;
  for (let g = 0; g < G; g++) {
    const post = (classPPost[g] as number) + eps;
    classBias[g] = Math.log(post);
    const postSet = classSets[g] as number[];
    for (let g2 = 0; g2 < G; g2++) {
      let sum = 0;
      for (const kk of postSet) for (const l of classSets[g2] as number[]) sum += pJoint[kk * nP + l] as number;
      classWeights[g * G + g2] = Math.log((sum + eps2) / (post * ((classPPre[g2] as number) + eps)));
    }
  }
  return {
    N,
    G,
    classOf,
    classWeights,
    classBias,
    classPPre,
    classPPost,
    classPatterns: classSets,
    patternPJoint: pJoint,
    nP,
  };
}

export function train(set: PatternSet, p: BcpnnParams, shape: ResolvedShape): TrainedNetwork {
  return buildNetwork(set, trainPatternTraces(set, p, shape), p, shape);
}

/** Dense N x N weights (row = post), for tests and inspection only. */
export function denseWeights(net: TrainedNetwork): Float64Array {
  const { N, G, classOf, classWeights } = net;
  const w = new Float64Array(N * N);
  for (let i = 0; i < N; i++) {
    const gi = classOf[i] as number;
    for (let j = 0; j < N; j++) w[i * N + j] = classWeights[gi * G + (classOf[j] as number)] as number;
  }
  return w;
}

/** Per-unit view of a class quantity (bias, pPre, pPost). */
export function perUnit(net: TrainedNetwork, classValues: Float64Array): Float64Array {
  const out = new Float64Array(net.N);
  for (let i = 0; i < net.N; i++) out[i] = classValues[net.classOf[i] as number] as number;
  return out;
}
