import { describe, expect, it } from 'vitest';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { denseWeights, perUnit } from '../../shared/models/bcpnn-sequences/training.js';
import { densePJoint, params, trainTrial } from './helpers.js';

// All expected numbers: worked example in model-spec.md (computed there with NumPy 2.4).
const example = params({
  sequences: [[[0, 0], [1, 1], [2, 2]]],
  minicolumns: 3,
  epochs: 1,
  patternDuration: 50,
  gapDuration: 0,
  restDuration: 0,
  tauZPre: 50,
  tauZPost: 5,
  tauP: 200,
  eps: 0.01,
  dt: 1,
});
const N = 6;

describe('the worked example of model-spec.md', () => {
  const { net } = trainTrial(example, 1);
  const w = denseWeights(net);

  it('reproduces the listed weights to 1e-6', () => {
    expect(w[1 * N + 0]).toBeCloseTo(0.749538686, 6); // forward
    expect(w[0 * N + 1]).toBeCloseTo(-2.937864254, 6); // backward
    expect(w[0 * N + 0]).toBeCloseTo(0.910142935, 6); // self
    expect(w[2 * N + 0]).toBeCloseTo(-0.210274984, 6);
    expect(w[4 * N + 0]).toBeCloseTo(0.749538686, 6); // across hypercolumns
  });

  it('reproduces the listed biases and traces to 1e-6', () => {
    const beta = perUnit(net, net.classBias);
    expect(beta[0]).toBeCloseTo(-1.917007092, 6);
    expect(beta[2]).toBeCloseTo(-1.533763115, 6);
    expect(perUnit(net, net.classPPre)[0]).toBeCloseTo(0.150614633, 6);
    expect(perUnit(net, net.classPPost)[2]).toBeCloseTo(0.20572235, 6);
    expect(densePJoint(net)[1 * N + 0]).toBeCloseTo(0.063142352, 6);
  });

  it('reproduces the recall match vectors after steps 0 and 99 to 1e-6', () => {
    const out = bcpnnSequences.run(example, 1, { trace: true });
    const panel = out.trace?.[0];
    expect(panel?.seriesLabels).toEqual(['p0', 'p1', 'p2']);
    const at = (t: number): number[] => Array.from(panel!.values.subarray(t * 3, t * 3 + 3));
    const first = at(0);
    const later = at(99);
    [0.682406, 0.143201, 0.174393].forEach((v, k) => expect(Math.abs(first[k]! - v)).toBeLessThanOrEqual(1e-6 + 5e-7));
    [0.000005, 0.001469, 0.998526].forEach((v, k) => expect(Math.abs(later[k]! - v)).toBeLessThanOrEqual(1e-6 + 5e-7));
    expect(out.metrics.success).toBe(true);
  });
});
