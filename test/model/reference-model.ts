/**
 * Direct step-by-step implementation of model-spec.md (dense, one step at a
 * time, float64), written from the spec and kept in the test suite only, to
 * check the fast path of shared/models/bcpnn-sequences against.
 */

export interface ReferenceConfig {
  readonly H: number;
  readonly M: number;
  /** sequences[s][q] = pattern (H minicolumn indices). */
  readonly sequences: readonly (readonly (readonly number[])[])[];
  readonly dt: number;
  readonly tauZPre: number;
  readonly tauZPost: number;
  readonly tauP: number;
  readonly eps: number;
  readonly epochs: number;
  readonly patternDuration: number;
  readonly gapDuration: number;
  readonly restDuration: number;
  readonly tauSupport: number;
  readonly tauAdapt: number;
  readonly adaptGain: number;
  readonly gain: number;
  readonly weightGain: number;
  readonly biasGain: number;
  readonly cueDuration: number;
  readonly cueStrength: number;
  readonly recallDuration: number;
  readonly matchThreshold: number;
  readonly minDwell: number;
}

export interface ReferenceTrained {
  readonly N: number;
  /** w[i * N + j], i post, j pre. */
  readonly w: Float64Array;
  readonly beta: Float64Array;
  readonly pPre: Float64Array;
  readonly pPost: Float64Array;
  readonly pJoint: Float64Array;
}

function unitVector(H: number, M: number, pattern: readonly number[]): Float64Array {
  const v = new Float64Array(H * M);
  for (let h = 0; h < H; h++) v[h * M + (pattern[h] as number)] = 1;
  return v;
}

export function referenceTrain(c: ReferenceConfig): ReferenceTrained {
  const N = c.H * c.M;
  const zPre = new Float64Array(N);
  const zPost = new Float64Array(N);
  const pPre = new Float64Array(N);
  const pPost = new Float64Array(N);
  const pJoint = new Float64Array(N * N);
  const zeros = new Float64Array(N);
  const step = (o: Float64Array): void => {
    for (let i = 0; i < N; i++) zPre[i] = zPre[i]! + (c.dt / c.tauZPre) * (o[i]! - zPre[i]!);
    for (let i = 0; i < N; i++) zPost[i] = zPost[i]! + (c.dt / c.tauZPost) * (o[i]! - zPost[i]!);
    for (let i = 0; i < N; i++) pPre[i] = pPre[i]! + (c.dt / c.tauP) * (zPre[i]! - pPre[i]!);
    for (let i = 0; i < N; i++) pPost[i] = pPost[i]! + (c.dt / c.tauP) * (zPost[i]! - pPost[i]!);
    for (let i = 0; i < N; i++) {
      for (let j = 0; j < N; j++) {
        pJoint[i * N + j] = pJoint[i * N + j]! + (c.dt / c.tauP) * (zPost[i]! * zPre[j]! - pJoint[i * N + j]!);
      }
    }
  };
  const nPattern = Math.round(c.patternDuration / c.dt);
  const nGap = Math.round(c.gapDuration / c.dt);
  const nRest = Math.round(c.restDuration / c.dt);
  for (let e = 0; e < c.epochs; e++) {
    for (const seq of c.sequences) {
      for (const pattern of seq) {
        const o = unitVector(c.H, c.M, pattern);
        for (let n = 0; n < nPattern; n++) step(o);
        for (let n = 0; n < nGap; n++) step(zeros);
      }
      for (let n = 0; n < nRest; n++) step(zeros);
    }
  }
  const w = new Float64Array(N * N);
  const beta = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    beta[i] = Math.log(pPost[i]! + c.eps);
    for (let j = 0; j < N; j++) {
      w[i * N + j] = Math.log((pJoint[i * N + j]! + c.eps * c.eps) / ((pPost[i]! + c.eps) * (pPre[j]! + c.eps)));
    }
  }
  return { N, w, beta, pPre, pPost, pJoint };
}

/** Distinct patterns in order of first appearance, and the id of each position. */
export function referencePatternIds(sequences: ReferenceConfig['sequences']): {
  patterns: number[][];
  ids: number[][];
} {
  const patterns: number[][] = [];
  const ids = sequences.map((seq) =>
    seq.map((p) => {
      const found = patterns.findIndex((q) => q.length === p.length && q.every((v, h) => v === p[h]));
      if (found >= 0) return found;
      patterns.push([...p]);
      return patterns.length - 1;
    }),
  );
  return { patterns, ids };
}

/** Noise-free recall cued by sequence `s`: match of every distinct pattern at every step (steps x nP). */
export function referenceRecall(c: ReferenceConfig, net: ReferenceTrained, s: number): Float64Array {
  const { H, M } = c;
  const N = net.N;
  const { patterns } = referencePatternIds(c.sequences);
  const nCue = Math.round(c.cueDuration / c.dt);
  const nFree = Math.round(c.recallDuration / c.dt);
  const support = new Float64Array(N);
  const adapt = new Float64Array(N);
  let o = new Float64Array(N).fill(1 / M);
  const cue = unitVector(H, M, c.sequences[s]![0]!);
  const out = new Float64Array((nCue + nFree) * patterns.length);
  for (let t = 0; t < nCue + nFree; t++) {
    const u = new Float64Array(N);
    for (let i = 0; i < N; i++) {
      let wo = 0;
      for (let j = 0; j < N; j++) wo += net.w[i * N + j]! * o[j]!;
      u[i] =
        c.biasGain * net.beta[i]! +
        c.weightGain * wo -
        c.adaptGain * adapt[i]! +
        (t < nCue ? c.cueStrength * cue[i]! : 0);
    }
    for (let i = 0; i < N; i++) support[i] = support[i]! + (c.dt / c.tauSupport) * (u[i]! - support[i]!);
    const next = new Float64Array(N);
    for (let h = 0; h < H; h++) {
      let max = -Infinity;
      for (let m = 0; m < M; m++) max = Math.max(max, c.gain * support[h * M + m]!);
      let sum = 0;
      for (let m = 0; m < M; m++) sum += Math.exp(c.gain * support[h * M + m]! - max);
      for (let m = 0; m < M; m++) next[h * M + m] = Math.exp(c.gain * support[h * M + m]! - max) / sum;
    }
    o = next;
    for (let i = 0; i < N; i++) adapt[i] = adapt[i]! + (c.dt / c.tauAdapt) * (o[i]! - adapt[i]!);
    patterns.forEach((p, k) => {
      let sum = 0;
      for (let h = 0; h < H; h++) sum += o[h * M + p[h]!]!;
      out[t * patterns.length + k] = (1 / H) * sum;
    });
  }
  return out;
}

/** Scoring as worded in model-spec.md: leading correct positions of the decoded ids. */
export function referenceScore(
  c: ReferenceConfig,
  matches: Float64Array,
  nP: number,
  expected: readonly number[],
): number {
  const steps = matches.length / nP;
  const ids: number[] = [];
  for (let t = 0; t < steps; t++) {
    let best = -1;
    let value = -Infinity;
    for (let k = 0; k < nP; k++) {
      if (matches[t * nP + k]! > value) {
        value = matches[t * nP + k]!;
        best = k;
      }
    }
    ids.push(value >= c.matchThreshold ? best : -1);
  }
  // Runs (the "none" id -1 included), drop short ones, merge equal neighbours.
  let runs: { id: number; len: number }[] = [];
  for (const id of ids) {
    const last = runs[runs.length - 1];
    if (last !== undefined && last.id === id) last.len++;
    else runs.push({ id, len: 1 });
  }
  runs = runs.filter((r) => r.len * c.dt >= c.minDwell);
  const merged: { id: number; len: number }[] = [];
  for (const r of runs) {
    const last = merged[merged.length - 1];
    if (last !== undefined && last.id === r.id) last.len += r.len;
    else merged.push({ ...r });
  }
  const seen = merged.filter((r) => r.id !== -1).map((r) => r.id);
  let correct = 0;
  while (correct < expected.length && seen[correct] === expected[correct]) correct++;
  return correct;
}
