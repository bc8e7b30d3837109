import { describe, expect, it } from 'vitest';
import { bcpnnSequences, makePatternSet } from '../../shared/models/bcpnn-sequences/index.js';
import { type BcpnnParams, resolveShape } from '../../shared/models/bcpnn-sequences/params.js';
import { sharedLayout } from '../../shared/models/bcpnn-sequences/recall-layout.js';
import { denseWeights, perUnit } from '../../shared/models/bcpnn-sequences/training.js';
import { createRandom } from '../../shared/random.js';
import { densePJoint, maxAbsError, maxRelativeError, params, referenceConfig, trainTrial } from './helpers.js';
import { referencePatternIds, referenceRecall, referenceScore, referenceTrain } from './reference-model.js';

/** Random small configurations, drawn reproducibly. */
function randomConfigs(count: number): { label: string; p: BcpnnParams }[] {
  const rng = createRandom(20261202, 'test-configs');
  const pick = <T>(xs: readonly T[]): T => xs[rng.int(xs.length)]!;
  const between = (lo: number, hi: number): number => lo + (hi - lo) * rng.uniform();
  const out: { label: string; p: BcpnnParams }[] = [];
  while (out.length < count) {
    const dt = pick([0.5, 1, 1, 2]);
    const L = 2 + rng.int(3);
    const K = 1 + rng.int(3);
    const k = rng.int(L - 1);
    const tau = (lo: number, hi: number): number => Math.max(dt, Math.round(between(lo, hi) * 4) / 4);
    const input = {
      hypercolumns: 1 + rng.int(4),
      minicolumns: 2 + rng.int(6),
      sequenceCount: K,
      sequenceLength: L,
      patternOverlap: pick([0, 0.5, 1, between(0, 1)]),
      overlapLength: k,
      overlapStart: 1,
      dt,
      tauZPre: tau(dt, 80),
      tauZPost: tau(dt, 20),
      tauP: pick([dt, tau(20, 2000)]),
      eps: pick([0.01, 0.001, 0.1]),
      epochs: 1 + rng.int(3),
      patternDuration: dt * (1 + rng.int(30)),
      gapDuration: dt * pick([0, 0, 3, 10]),
      restDuration: dt * pick([0, 7, 25]),
      tauSupport: tau(dt, 15),
      tauAdapt: tau(20, 200),
      adaptGain: between(0, 3),
      gain: between(0.5, 2),
      weightGain: between(0.5, 1.5),
      biasGain: between(0.5, 1.5),
      cueDuration: dt * (2 + rng.int(15)),
      cueStrength: between(5, 25),
      recallDuration: dt * (40 + rng.int(120)),
      noise: 0,
      matchThreshold: 0.5,
      minDwell: pick([0, 3, 5]),
    };
    const parsed = bcpnnSequences.params.safeParse(input);
    if (parsed.success)
      out.push({
        label: `#${out.length} H${input.hypercolumns} M${input.minicolumns} K${K} L${L} k${k}`,
        p: parsed.data,
      });
  }
  return out;
}

function compare(p: BcpnnParams, seed: number): void {
  const fast = trainTrial(p, seed);
  const sequences = makePatternSet(p, seed).sequences;
  const config = referenceConfig(p, sequences);
  const ref = referenceTrain(config);
  // model-spec.md: another float64 implementation must reproduce the trained
  // weights to 1e-9. Weights, biases and pJoint: 1e-9 relative (max(1, |w|)
  // as the scale near zero).
  expect(maxRelativeError(denseWeights(fast.net), ref.w)).toBeLessThanOrEqual(1e-9);
  expect(maxRelativeError(perUnit(fast.net, fast.net.classBias), ref.beta)).toBeLessThanOrEqual(1e-9);
  expect(maxRelativeError(densePJoint(fast.net), ref.pJoint)).toBeLessThanOrEqual(1e-9);
  const out = bcpnnSequences.run(p, seed, { trace: true });
  const { patterns, ids } = referencePatternIds(sequences);
  expect(out.trace?.length).toBe(sequences.length);
  sequences.forEach((_, s) => {
    const refTrace = referenceRecall(config, ref, s);
    const panel = out.trace![s]!;
    expect(panel.seriesLabels.length).toBe(patterns.length);
    // model-spec.md: the noise-free recall trajectory to 1e-9 (absolute, on
    // matches in [0, 1]); measured differences are about 1e-11.
    expect(maxAbsError(panel.values, refTrace)).toBeLessThanOrEqual(1e-9);
    const correct = referenceScore(config, refTrace, patterns.length, ids[s]!);
    expect((out.metrics['correctPrefix'] as number[])[s]).toBe(correct);
  });
}

describe('the fast path against the step-by-step reference', () => {
  it('matches weights, biases, trajectories and scores on 24 random small configurations', () => {
    for (const { label, p } of randomConfigs(24)) {
      try {
        compare(p, 5);
      } catch (error) {
        throw new Error(`configuration ${label}: ${error instanceof Error ? error.message : String(error)}`);
      }
    }
  });

  it('matches on the worked example of model-spec.md', () => {
    compare(
      params({
        sequences: [
          [
            [0, 0],
            [1, 1],
            [2, 2],
          ],
        ],
        minicolumns: 3,
        epochs: 1,
        patternDuration: 50,
        gapDuration: 0,
        restDuration: 0,
        tauP: 200,
      }),
      1,
    );
  });

  it('matches when a silent segment is longer than 4096 steps (closed-form geometric sums)', () => {
    compare(
      params({
        hypercolumns: 2,
        minicolumns: 4,
        sequenceCount: 2,
        sequenceLength: 2,
        overlapLength: 0,
        restDuration: 5000,
        tauP: 3000,
        recallDuration: 200,
      }),
      3,
    );
  });

  it('matches where recall without noise updates one unit per class of each kind of hypercolumn', () => {
    for (const [input, seed] of [
      [{ hypercolumns: 5, minicolumns: 9, sequenceCount: 2, sequenceLength: 3, overlapLength: 1 }, 4],
      [{ hypercolumns: 4, minicolumns: 12, sequenceCount: 2, sequenceLength: 4, patternOverlap: 0.5 }, 6],
    ] as const) {
      const p = params({ ...input, recallDuration: 300 });
      const { set, net } = trainTrial(p, seed);
      // The layout the model's recall takes without noise stands for more units than it updates.
      expect(sharedLayout(net, set, resolveShape(p)).size).toBeLessThan(net.N / 2);
      compare(p, seed);
    }
  });

  it('matches on the default network shape with shared units (M < K*L) and full overlap', () => {
    compare(
      params({
        hypercolumns: 3,
        minicolumns: 4,
        sequenceCount: 2,
        sequenceLength: 4,
        patternOverlap: 1,
        overlapLength: 2,
        recallDuration: 300,
      }),
      8,
    );
  });
});
