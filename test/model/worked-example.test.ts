import { describe, expect, it } from 'vitest';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { denseWeights, perUnit } from '../../shared/models/bcpnn-sequences/training.js';
import { densePJoint, params, trainTrial } from './helpers.js';

// All expected numbers: worked example in model-spec.md (computed there with NumPy 2.4).
const example = params({
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
  tauZPre: 50,
  tauZPost: 5,
  tauP: 200,
  eps: 0.01,
  dt: 1,
});
const N = 6;

/**
 * model-spec.md prints the weights and traces with 9 decimals and the matches
 * with 6: a correct value lies within half a unit of the last printed place
 * of the printed one (plus float64 rounding, far below that).
 */
function expectPrinted(actual: number | undefined, printed: number, decimals: 9 | 6): void {
  const halfUnit = decimals === 9 ? 5e-10 : 5e-7;
  expect(actual).toBeDefined();
  expect(Math.abs(actual! - printed), `${actual} against ${printed}`).toBeLessThanOrEqual(halfUnit);
}

describe('the worked example of model-spec.md', () => {
  const { net } = trainTrial(example, 1);
  const w = denseWeights(net);

  it('reproduces the listed weights to the 9 printed decimals', () => {
    expectPrinted(w[1 * N + 0], 0.749538686, 9); // forward
    expectPrinted(w[0 * N + 1], -2.937864254, 9); // backward
    expectPrinted(w[0 * N + 0], 0.910142935, 9); // self
    expectPrinted(w[2 * N + 0], -0.210274984, 9);
    expectPrinted(w[4 * N + 0], 0.749538686, 9); // across hypercolumns
  });

  it('reproduces the listed biases and traces to the 9 printed decimals', () => {
    const beta = perUnit(net, net.classBias);
    expectPrinted(beta[0], -1.917007092, 9);
    expectPrinted(beta[2], -1.533763115, 9);
    expectPrinted(perUnit(net, net.classPPre)[0], 0.150614633, 9);
    expectPrinted(perUnit(net, net.classPPost)[2], 0.20572235, 9);
    expectPrinted(densePJoint(net)[1 * N + 0], 0.063142352, 9);
  });

  it('reproduces the recall match vectors after steps 0 and 99 to the 6 printed decimals', () => {
    const out = bcpnnSequences.run(example, 1, { trace: true });
    const panel = out.trace?.[0];
    expect(panel?.seriesLabels).toEqual(['p0', 'p1', 'p2']);
    const at = (t: number): number[] => Array.from(panel!.values.subarray(t * 3, t * 3 + 3));
    const first = at(0);
    const later = at(99);
    [0.682406, 0.143201, 0.174393].forEach((v, k) => {
      expectPrinted(first[k], v, 6);
    });
    [0.000005, 0.001469, 0.998526].forEach((v, k) => {
      expectPrinted(later[k], v, 6);
    });
    expect(out.metrics.success).toBe(true);
  });
});
