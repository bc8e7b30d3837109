import { expNonPositive } from '../../fast-exp.js';
import type { RandomSource } from '../../random.js';
import type { DecisionWatch } from './decision-watch.js';
import { fillNormal } from './normal-noise.js';
import type { BcpnnParams, ResolvedShape } from './params.js';
import type { PatternSet } from './patterns.js';
import { type RecallLayout, sharedLayout, unitLayout } from './recall-layout.js';
import { activeAt } from './scoring.js';
import type { TrainedNetwork } from './training.js';

/** What Recaller.run returns when the state stopped being finite. */
export const DIVERGED = -1;

/**
 * Cued recall (plasticity off), one step at a time as in docs/model.md.
 *
 * The recurrent input (w o)_i only depends on the class of unit i and on the
 * summed output of every class, because all units of a class share their
 * weights: (w o)_i = sum_g W[class(i)][g] * O_g with O_g = sum of o over
 * class g. That is exact (only the order of additions changes) and costs
 * O(N + G^2) per step instead of O(N^2). Without noise the loop goes further
 * and updates one representative per class of each kind of hypercolumn
 * (recall-layout.ts). All buffers are allocated once.
 */
export class Recaller {
  private readonly s: Float64Array;
  private readonly o: Float64Array;
  private readonly a: Float64Array;
  private readonly classSum: Float64Array;
  private readonly classInput: Float64Array;
  private readonly external: Float64Array;
  /** The units the loop updates: every unit, or (without noise) one per class of each kind of hypercolumn. */
  readonly layout: RecallLayout;
  readonly nPatterns: number;
  readonly steps: number;
  private readonly matches: Float64Array;

  constructor(
    private readonly net: TrainedNetwork,
    private readonly set: PatternSet,
    private readonly p: BcpnnParams,
    private readonly shape: ResolvedShape,
    /** Which units to update; by default every unit with noise, one per class of each kind of hypercolumn without. */
    layout?: RecallLayout,
  ) {
    this.layout = layout ?? (p.noise > 0 ? unitLayout(net, set, shape) : sharedLayout(net, set, shape));
    const R = this.layout.size;
    this.s = new Float64Array(R);
    this.o = new Float64Array(R);
    this.a = new Float64Array(R);
    this.classSum = new Float64Array(net.G);
    this.classInput = new Float64Array(net.G);
    this.external = new Float64Array(R);
    this.nPatterns = set.patterns.length;
    this.steps = shape.nCue + shape.nFree;
    this.matches = new Float64Array(this.nPatterns);
  }

  /**
   * Recall cued by the first pattern of `sequence`. Writes the active pattern
   * id (or -1) of every step into `active` and, when given, the match of
   * every pattern at every step into `trace` (row-major, steps x nPatterns).
   *
   * With a `watch`, the recall ends after the step on which the watch says
   * the outcome is decided; `active` and `trace` are then written up to that
   * step only. If `alignNoise` is set, the noise of the steps not run is
   * still drawn (and discarded), so that the next recall sees the same noise
   * as it would after a full recall.
   *
   * Returns the number of steps written, or DIVERGED when the state stopped
   * being finite (the rest of `active` is then -1 and of `trace` NaN). A
   * number rather than an object: nothing is allocated per recall.
   */
  run(
    sequence: number,
    noise: RandomSource | null,
    active: Int32Array,
    trace: Float64Array | null,
    watch: DecisionWatch | null = null,
    alignNoise = false,
  ): number {
    const { s, o, a, classSum, classInput, external, matches, nPatterns, steps } = this;
    const { size: R, types: T, typeStart, typeWeight, repClass, repCount, repWeight, patternRep } = this.layout;
    const { H, M, nCue } = this.shape;
    const { G, classWeights, classBias } = this.net;
    // Noise gives every unit its own input: only the unit layout can take it.
    if (noise !== null && R !== this.shape.N)
      throw new RangeError('recall with noise needs the unit layout (params.noise > 0)');
    // With one unit per representative the counts are all 1: skipping them keeps the noisy loop as fast as before.
    const counted = this.layout.counted;
    const p = this.p;
    const kS = p.dt / p.tauSupport;
    const kA = p.dt / p.tauAdapt;
    const gain = p.gain;
    const adaptGain = p.adaptGain;
    const sigma = p.noise;
    const threshold = p.matchThreshold;
    const invH = 1 / H;
    const biasGain = p.biasGain;
    const weightGain = p.weightGain;
    const cueStrength = p.cueStrength;

    s.fill(0);
    a.fill(0);
    o.fill(1 / M);
    // External input: cue (first nCue steps) plus noise; zero otherwise.
    external.fill(0);
    const cueId = this.set.ids[sequence]?.[0] as number;
    const cueBase = cueId * T;
    classSum.fill(0);
    for (let j = 0; j < R; j++) {
      const g = repClass[j] as number;
      classSum[g] = (classSum[g] as number) + (repWeight[j] as number) * (o[j] as number);
    }

    for (let t = 0; t < steps; t++) {
      // Recurrent input through the class sums (o of the previous step).
      for (let g = 0; g < G; g++) {
        const row = g * G;
        let acc = 0;
        for (let g2 = 0; g2 < G; g2++) acc += (classWeights[row + g2] as number) * (classSum[g2] as number);
        classInput[g] = biasGain * (classBias[g] as number) + weightGain * acc;
      }
      if (noise !== null) fillNormal(noise, external, sigma);
      if (t < nCue) {
        for (let kind = 0; kind < T; kind++) {
          const i = patternRep[cueBase + kind] as number;
          external[i] = (noise !== null ? (external[i] as number) : 0) + cueStrength;
        }
      } else if (t === nCue && noise === null) {
        for (let kind = 0; kind < T; kind++) external[patternRep[cueBase + kind] as number] = 0;
      }
      classSum.fill(0);
      let finite = true;
      // One kind of hypercolumn at a time (with the unit layout, one hypercolumn).
      for (let kind = 0; kind < T; kind++) {
        const off = typeStart[kind] as number;
        const end = typeStart[kind + 1] as number;
        // Support update, then softmax of gain*s in this hypercolumn (max subtracted);
        // o holds gain*s until the exponentials replace it.
        let mx = -Infinity;
        for (let i = off; i < end; i++) {
          const u =
            (classInput[repClass[i] as number] as number) - adaptGain * (a[i] as number) + (external[i] as number);
          const si = s[i] as number;
          const next = si + kS * (u - si);
          s[i] = next;
          const v = gain * next;
          o[i] = v;
          mx = Math.max(mx, v);
        }
        let sum = 0;
        for (let i = off; i < end; i++) {
          const e = expNonPositive((o[i] as number) - mx);
          o[i] = e;
          sum += counted ? (repCount[i] as number) * e : e;
        }
        if (!(sum > 0 && sum < Infinity)) finite = false;
        // Output, adaptation, and the class sums for the next step.
        const inv = 1 / sum;
        for (let i = off; i < end; i++) {
          const oi = (o[i] as number) * inv;
          o[i] = oi;
          const ai = a[i] as number;
          a[i] = ai + kA * (oi - ai);
          const g = repClass[i] as number;
          classSum[g] = (classSum[g] as number) + (counted ? (repWeight[i] as number) * oi : oi);
        }
      }
      if (!finite) {
        active.fill(-1, t);
        if (trace !== null) trace.fill(Number.NaN, t * nPatterns);
        return DIVERGED;
      }
      for (let k = 0; k < nPatterns; k++) {
        let sum = 0;
        const base = k * T;
        for (let kind = 0; kind < T; kind++)
          sum += (typeWeight[kind] as number) * (o[patternRep[base + kind] as number] as number);
        matches[k] = sum * invH;
      }
      const id = activeAt(matches, 0, nPatterns, threshold);
      active[t] = id;
      if (trace !== null) trace.set(matches, t * nPatterns);
      if (watch?.push(id) === true) {
        if (noise !== null && alignNoise) {
          for (let rest = t + 1; rest < steps; rest++) fillNormal(noise, external, sigma);
        }
        return t + 1;
      }
    }
    return steps;
  }
}
