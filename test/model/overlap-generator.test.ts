import { describe, expect, it } from 'vitest';
import { generateSequences, indexPatterns, patternOverlap } from '../../shared/models/bcpnn-sequences/patterns.js';
import { createRandom } from '../../shared/random.js';

describe('pattern overlap', () => {
  it('counts the fraction of hypercolumns with the same active minicolumn', () => {
    // common practice, no source: (2,3,3) and (3,3,3) agree in 2 of 3 hypercolumns.
    expect(patternOverlap([2, 3, 3], [3, 3, 3])).toBeCloseTo(2 / 3, 15);
    expect(patternOverlap([1, 2], [1, 2])).toBe(1);
    expect(patternOverlap([0, 1], [1, 0])).toBe(0);
  });
});

describe('the overlap generator', () => {
  it('gives every overlapped pair an overlap of exactly round(f*H)/H', () => {
    for (const [H, f, k, start] of [
      [10, 0.4, 2, 2],
      [10, 0.25, 1, 3],
      [7, 0.5, 3, 1],
      [16, 1, 2, 2],
      [5, 0, 2, 1],
    ] as const) {
      for (let seed = 0; seed < 5; seed++) {
        const set = generateSequences({ H, M: 40, K: 3, L: 6, f, k, start }, createRandom(seed, 'patterns'));
        for (let s = 1; s < 3; s++) {
          for (let q = start; q < start + k; q++) {
            expect(patternOverlap(set.sequences[0]![q]!, set.sequences[s]![q]!)).toBe(Math.round(f * H) / H);
          }
        }
      }
    }
  });

  it('lets non-overlapped positions share no unit when M >= K*L', () => {
    for (let seed = 0; seed < 10; seed++) {
      const start = 2;
      const k = 2;
      const set = generateSequences({ H: 8, M: 18, K: 3, L: 6, f: 0.5, k, start }, createRandom(seed, 'patterns'));
      const positions: [number, number][] = [];
      for (let s = 0; s < 3; s++) for (let q = 0; q < 6; q++) positions.push([s, q]);
      for (const [s1, q1] of positions) {
        for (const [s2, q2] of positions) {
          if (s1 === s2 && q1 === q2) continue;
          const overlappedPair = q1 === q2 && q1 >= start && q1 < start + k && (s1 === 0 || s2 === 0);
          const bothCopies = q1 === q2 && q1 >= start && q1 < start + k;
          if (overlappedPair || bothCopies) continue;
          expect(patternOverlap(set.sequences[s1]![q1]!, set.sequences[s2]![q2]!)).toBe(0);
        }
      }
    }
  });

  it('always gives the sequences different cue patterns, also when M < K*L', () => {
    for (let seed = 0; seed < 200; seed++) {
      for (const [H, M, K] of [
        [1, 3, 3],
        [2, 2, 4],
        [3, 4, 5],
        [10, 20, 2],
      ] as const) {
        const set = generateSequences({ H, M, K, L: 4, f: 1, k: 3, start: 1 }, createRandom(seed, 'patterns'));
        const cues = set.sequences.map((seq) => seq[0]!.join(','));
        expect(new Set(cues).size).toBe(K);
      }
    }
  });

  it('never repeats a minicolumn in a hypercolumn between consecutive patterns when M < K*L', () => {
    for (let seed = 0; seed < 20; seed++) {
      const set = generateSequences({ H: 6, M: 3, K: 2, L: 6, f: 0, k: 0, start: 1 }, createRandom(seed, 'patterns'));
      for (const seq of set.sequences) {
        for (let q = 1; q < seq.length; q++) for (let h = 0; h < 6; h++) expect(seq[q]![h]).not.toBe(seq[q - 1]![h]);
      }
    }
  });

  it('numbers distinct patterns in order of first appearance and lets identical patterns share an id', () => {
    const set = indexPatterns([
      [
        [0, 0],
        [1, 1],
        [2, 2],
      ],
      [
        [3, 3],
        [1, 1],
        [4, 4],
      ],
    ]);
    expect(set.ids).toEqual([
      [0, 1, 2],
      [3, 1, 4],
    ]);
    expect(set.patterns).toEqual([
      [0, 0],
      [1, 1],
      [2, 2],
      [3, 3],
      [4, 4],
    ]);
  });

  it('draws the same patterns for the same seed and different ones for another seed', () => {
    const spec = { H: 10, M: 20, K: 2, L: 6, f: 0.4, k: 2, start: 2 };
    const a = generateSequences(spec, createRandom(4, 'patterns'));
    const b = generateSequences(spec, createRandom(4, 'patterns'));
    const c = generateSequences(spec, createRandom(5, 'patterns'));
    expect(b.sequences).toEqual(a.sequences);
    expect(c.sequences).not.toEqual(a.sequences);
  });
});
