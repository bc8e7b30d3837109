import { describe, expect, it } from 'vitest';
import { MetricsSchema } from '../../shared/model.js';
import { bcpnnSequences, makePatternSet, recallTrial, trainTrial } from '../../shared/models/bcpnn-sequences/index.js';
import { params } from './helpers.js';

describe('trial outcomes', () => {
  it('records a diverging recall as an outcome with success false instead of throwing', () => {
    const p = params({ hypercolumns: 3, minicolumns: 4, sequenceLength: 3, overlapLength: 0, recallDuration: 50 });
    const parts = trainTrial(p, 2);
    // A non-finite weight (impossible from valid training) stands in for a blow-up.
    parts.net.classWeights[0] = Number.POSITIVE_INFINITY;
    const out = recallTrial(p, 2, parts);
    expect(out.metrics['diverged']).toBe(true);
    expect(out.metrics.success).toBe(false);
    expect(MetricsSchema.safeParse(out.metrics).success).toBe(true);
  });

  it('returns metrics that the shared metrics schema accepts, with per-sequence arrays of length K', () => {
    const p = params({ sequenceCount: 3, sequenceLength: 5, patternOverlap: 0.5, overlapLength: 2, noise: 0.2 });
    const out = bcpnnSequences.run(p, 4);
    expect(MetricsSchema.safeParse(out.metrics).success).toBe(true);
    expect(out.metrics['correctPrefix']).toHaveLength(3);
    expect(out.metrics['firstError']).toHaveLength(3);
    expect(out.trace).toBeUndefined();
  });

  it('keeps the stored patterns unchanged when only the noise changes', () => {
    const quiet = params({ patternOverlap: 0.3, overlapLength: 2 });
    const noisy = params({ patternOverlap: 0.3, overlapLength: 2, noise: 1 });
    expect(makePatternSet(noisy, 11).sequences).toEqual(makePatternSet(quiet, 11).sequences);
  });

  it('gives one trace panel per recall with the cue window marked', () => {
    const p = params({
      hypercolumns: 4,
      minicolumns: 12,
      sequenceLength: 4,
      dt: 0.5,
      cueDuration: 20,
      recallDuration: 100,
    });
    const out = bcpnnSequences.run(p, 1, { trace: true });
    expect(out.trace?.map((t) => t.title)).toEqual(['recall 0 (sequence 0)', 'recall 1 (sequence 1)']);
    const panel = out.trace![0]!;
    expect(panel.steps).toBe(240);
    expect(panel.markEndMs).toBe(20);
    expect(panel.stepMs).toBe(0.5);
    expect(panel.values.length).toBe(240 * panel.seriesLabels.length);
  });

  it('estimates a cost that grows with the network and the recall time', () => {
    const small = bcpnnSequences.cost(params({ noise: 0.5 }));
    const wide = bcpnnSequences.cost(params({ hypercolumns: 25, minicolumns: 100, noise: 0.5 }));
    const long = bcpnnSequences.cost(params({ recallDuration: 4000, noise: 0.5 }));
    expect(small).toBeGreaterThan(1e6);
    expect(wide).toBeGreaterThan(10 * small);
    expect(long).toBeGreaterThan(3 * small);
  });

  it('estimates a noise-free trial by the units its recall updates, not by the network size', () => {
    // By hand: 12 patterns on distinct minicolumns of every hypercolumn leave each hypercolumn with
    // 12 one-unit classes and one idle class, at (10, 20) as at (25, 100): 13 units updated per step.
    const quiet = bcpnnSequences.cost(params({}));
    const quietWide = bcpnnSequences.cost(params({ hypercolumns: 25, minicolumns: 100 }));
    const noisy = bcpnnSequences.cost(params({ noise: 0.5 }));
    expect(quietWide).toBeLessThan(2 * quiet);
    expect(noisy).toBeGreaterThan(5 * quiet);
    expect(bcpnnSequences.cost(params({ recallDuration: 4000 }))).toBeGreaterThan(3 * quiet);
  });
});
