import { describe, expect, it } from 'vitest';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { params } from './helpers.js';

// Source of the expected shape: model-spec.md, "Defaults that produce recall"
// (H=10, M=20, L=6, K=2, noise 0, all other parameters at their defaults).
const SEEDS = [1, 2, 3, 4];

function successes(input: Record<string, unknown>): boolean[] {
  const p = params({ hypercolumns: 10, minicolumns: 20, sequenceLength: 6, sequenceCount: 2, noise: 0, ...input });
  return SEEDS.map((seed) => bcpnnSequences.run(p, seed).metrics.success);
}

describe('the default network shape stated in model-spec.md', () => {
  it('recalls both sequences without overlap', () => {
    expect(successes({ patternOverlap: 0, overlapLength: 1 })).toEqual([true, true, true, true]);
  });

  it('recalls both sequences at patternOverlap 0.4', () => {
    expect(successes({ patternOverlap: 0.4, overlapLength: 2 })).toEqual([true, true, true, true]);
  });

  // model-spec.md, "Defaults that produce recall": "recall succeeds for
  // patternOverlap up to 0.6 and fails from 0.8 up for overlapLength >= 1".
  for (const overlapLength of [1, 2, 3]) {
    it(`recalls both sequences at patternOverlap 0.6 with overlapLength ${overlapLength} and tauZPre 50`, () => {
      expect(successes({ patternOverlap: 0.6, overlapLength, tauZPre: 50 })).toEqual([true, true, true, true]);
    });

    it(`fails at patternOverlap 0.8 with overlapLength ${overlapLength} and tauZPre 50`, () => {
      expect(successes({ patternOverlap: 0.8, overlapLength, tauZPre: 50 })).toEqual([false, false, false, false]);
    });
  }

  it('fails at patternOverlap 1 with overlapLength 2 and tauZPre 50', () => {
    expect(successes({ patternOverlap: 1, overlapLength: 2, tauZPre: 50 })).toEqual([false, false, false, false]);
  });

  // model-spec.md: "raising tauZPre to 100 lets the network ... succeed even
  // at patternOverlap 1 for overlapLength 1 and 2".
  it('succeeds at patternOverlap 1 with overlapLength 1 once tauZPre is 100', () => {
    expect(successes({ patternOverlap: 1, overlapLength: 1, tauZPre: 100 })).toEqual([true, true, true, true]);
  });

  it('succeeds at patternOverlap 1 with overlapLength 2 once tauZPre is 100', () => {
    expect(successes({ patternOverlap: 1, overlapLength: 2, tauZPre: 100 })).toEqual([true, true, true, true]);
  });

  it('reports the achieved overlap of the overlapped pairs', () => {
    const p = params({ patternOverlap: 0.4, overlapLength: 2 });
    expect(bcpnnSequences.run(p, 1).metrics['achievedOverlap']).toBe(0.4);
  });
});
