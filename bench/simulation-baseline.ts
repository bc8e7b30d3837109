/**
 * The recall of bcpnn-sequences before the faster primitives, kept only so
 * that the "simulation" section can time old and new side by side in one
 * process: the softmax through Math.exp, and the noise drawn with one call of
 * the random source's uniform() (pure-rand's xoroshiro128plus and
 * uniformFloat64) per draw. Same arithmetic otherwise, so the metrics must
 * come out identical; the section checks that they do.
 */
import { createHash } from 'node:crypto';
import { uniformFloat64 } from 'pure-rand/distribution/uniformFloat64';
import { xoroshiro128plusFromState } from 'pure-rand/generator/xoroshiro128plus';
import type { TrialParts } from '../shared/models/bcpnn-sequences/index.js';
import { type BcpnnParams, resolveShape } from '../shared/models/bcpnn-sequences/params.js';
import { achievedOverlap } from '../shared/models/bcpnn-sequences/patterns.js';
import { activeAt, scoreRecall } from '../shared/models/bcpnn-sequences/scoring.js';

/** uniform() of the random stream `stream` of `seed`, through the library. */
export function libraryUniform(seed: number, stream: string): () => number {
  const digest = createHash('sha256').update(`recallscape-rng:${stream}:${seed}`).digest();
  const rng = xoroshiro128plusFromState([
    digest.readInt32LE(0),
    digest.readInt32LE(4),
    digest.readInt32LE(8),
    digest.readInt32LE(12),
  ]);
  return () => uniformFloat64(rng);
}

// Ziggurat tables (Marsaglia & Tsang 2000, 128 layers), as in normal-noise.ts.
const LAYERS = 128;
const R = 3.442619855899;
const V = 9.91256303526217e-3;
const density = (x: number): number => Math.exp(-0.5 * x * x);
const X = new Float64Array(LAYERS + 1);
const F = new Float64Array(LAYERS + 1);
X[0] = V / density(R);
X[1] = R;
for (let i = 1; i < LAYERS - 1; i++)
  X[i + 1] = Math.sqrt(-2 * Math.log(density(X[i] as number) + V / (X[i] as number)));
X[LAYERS] = 0;
for (let i = 0; i <= LAYERS; i++) F[i] = density(X[i] as number);
F[0] = 0;

function slowPath(uniform: () => number, layer: number, x0: number, sign0: number): number {
  let i = layer;
  let x = x0;
  let sign = sign0;
  for (;;) {
    if (x < (X[i + 1] as number)) return sign * x;
    if (i === 0) {
      let tx = 0;
      let ty = 0;
      do {
        tx = -Math.log1p(-uniform()) / R;
        ty = -Math.log1p(-uniform());
      } while (2 * ty < tx * tx);
      return sign * (R + tx);
    }
    const y = (F[i] as number) + uniform() * ((F[i + 1] as number) - (F[i] as number));
    if (y < density(x)) return sign * x;
    const j = uniform() * 2 * LAYERS;
    const bits = j | 0;
    i = bits & (LAYERS - 1);
    sign = bits & LAYERS ? -1 : 1;
    x = (j - bits) * (X[i] as number);
  }
}

/** The old fill: one uniform() call per draw. */
export function baselineFillNormal(uniform: () => number, out: Float64Array, sigma: number): void {
  for (let n = 0; n < out.length; n++) {
    const j = uniform() * 2 * LAYERS;
    const bits = j | 0;
    const i = bits & (LAYERS - 1);
    const x = (j - bits) * (X[i] as number);
    if (x < (X[i + 1] as number)) out[n] = sigma * x * (1 - ((bits >> 6) & 2));
    else out[n] = sigma * slowPath(uniform, i, x, bits & LAYERS ? -1 : 1);
  }
}

/** Recall of every sequence and the metrics, the old way (no trace, no early stop). */
export function baselineRecallTrial(p: BcpnnParams, seed: number, parts: TrialParts): Record<string, unknown> {
  const shape = resolveShape(p);
  const { N, H, M, K, nCue } = shape;
  const { set, net } = parts;
  const { G, classOf, classWeights, classBias } = net;
  const steps = shape.nCue + shape.nFree;
  const nPatterns = set.patterns.length;
  const s = new Float64Array(N);
  const o = new Float64Array(N);
  const a = new Float64Array(N);
  const classSum = new Float64Array(G);
  const classInput = new Float64Array(G);
  const external = new Float64Array(N);
  const scaled = new Float64Array(N);
  const matches = new Float64Array(nPatterns);
  const patternUnits = new Int32Array(nPatterns * H);
  set.patterns.forEach((pattern, k) => {
    for (let h = 0; h < H; h++) patternUnits[k * H + h] = h * M + (pattern[h] as number);
  });
  const uniform = p.noise > 0 ? libraryUniform(seed, 'noise') : null;
  const kS = p.dt / p.tauSupport;
  const kA = p.dt / p.tauAdapt;
  const { gain, adaptGain, biasGain, weightGain, cueStrength, matchThreshold } = p;
  const sigma = p.noise;
  const invH = 1 / H;
  const active = new Int32Array(steps);
  const correctPrefix: number[] = [];
  const firstError: (number | null)[] = [];
  const dwell: number[] = [];
  let diverged = false;
  let recalled = 0;
  for (let sequence = 0; sequence < K; sequence++) {
    s.fill(0);
    a.fill(0);
    o.fill(1 / M);
    external.fill(0);
    const cueBase = (set.ids[sequence]?.[0] as number) * H;
    classSum.fill(0);
    for (let j = 0; j < N; j++) {
      const g = classOf[j] as number;
      classSum[g] = (classSum[g] as number) + (o[j] as number);
    }
    for (let t = 0; t < steps; t++) {
      for (let g = 0; g < G; g++) {
        let acc = 0;
        for (let g2 = 0; g2 < G; g2++) acc += (classWeights[g * G + g2] as number) * (classSum[g2] as number);
        classInput[g] = biasGain * (classBias[g] as number) + weightGain * acc;
      }
      if (uniform !== null) baselineFillNormal(uniform, external, sigma);
      if (t < nCue) {
        for (let h = 0; h < H; h++) {
          const i = patternUnits[cueBase + h] as number;
          external[i] = (uniform !== null ? (external[i] as number) : 0) + cueStrength;
        }
      } else if (t === nCue && uniform === null) {
        for (let h = 0; h < H; h++) external[patternUnits[cueBase + h] as number] = 0;
      }
      classSum.fill(0);
      let finite = true;
      for (let h = 0; h < H; h++) {
        const off = h * M;
        const end = off + M;
        let mx = -Infinity;
        for (let i = off; i < end; i++) {
          const u =
            (classInput[classOf[i] as number] as number) - adaptGain * (a[i] as number) + (external[i] as number);
          const si = s[i] as number;
          const next = si + kS * (u - si);
          s[i] = next;
          const v = gain * next;
          scaled[i] = v;
          if (v > mx) mx = v;
        }
        let sum = 0;
        for (let i = off; i < end; i++) {
          const e = Math.exp((scaled[i] as number) - mx);
          o[i] = e;
          sum += e;
        }
        if (!(sum > 0 && sum < Infinity)) finite = false;
        const inv = 1 / sum;
        for (let i = off; i < end; i++) {
          const oi = (o[i] as number) * inv;
          o[i] = oi;
          a[i] = (a[i] as number) + kA * (oi - (a[i] as number));
          const g = classOf[i] as number;
          classSum[g] = (classSum[g] as number) + oi;
        }
      }
      if (!finite) {
        active.fill(-1, t);
        diverged = true;
        break;
      }
      for (let k = 0; k < nPatterns; k++) {
        let sum = 0;
        for (let h = 0; h < H; h++) sum += o[patternUnits[k * H + h] as number] as number;
        matches[k] = sum * invH;
      }
      active[t] = activeAt(matches, 0, nPatterns, matchThreshold);
    }
    const score = scoreRecall(active, set.ids[sequence] ?? [], p.dt, p.minDwell);
    correctPrefix.push(score.correctPrefix);
    firstError.push(score.firstError);
    dwell.push(...score.dwellMs);
    if (score.firstError === null) recalled++;
  }
  return {
    success: !diverged && recalled === K,
    recalledFraction: recalled / K,
    meanCorrectPrefix: correctPrefix.reduce((x, y) => x + y, 0) / K,
    meanDwellMs: dwell.length === 0 ? null : dwell.reduce((x, y) => x + y, 0) / dwell.length,
    achievedOverlap: achievedOverlap(set, shape.start, shape.k),
    diverged,
    distinctPatterns: set.patterns.length,
    correctPrefix,
    firstError,
  };
}
