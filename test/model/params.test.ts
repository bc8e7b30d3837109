import { describe, expect, it } from 'vitest';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { resolveShape } from '../../shared/models/bcpnn-sequences/params.js';

/** The issues of a rejected input as "path: message" lines. */
function rejection(input: unknown): string[] {
  const result = bcpnnSequences.params.safeParse(input);
  expect(result.success).toBe(false);
  return result.success ? [] : result.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`);
}

describe('bcpnn-sequences parameters', () => {
  it('gives the defaults of model-spec.md for an empty input', () => {
    const p = bcpnnSequences.params.parse({});
    // Defaults listed in model-spec.md, "Defaults that produce recall".
    expect(p).toMatchObject({
      hypercolumns: 10,
      minicolumns: 20,
      sequenceCount: 2,
      sequenceLength: 6,
      dt: 1,
      tauZPre: 50,
      tauZPost: 5,
      tauP: 5000,
      eps: 0.01,
      epochs: 3,
      patternDuration: 100,
      gapDuration: 0,
      restDuration: 200,
      tauSupport: 10,
      tauAdapt: 150,
      adaptGain: 2,
      gain: 1,
      weightGain: 1,
      biasGain: 1,
      cueDuration: 50,
      cueStrength: 20,
      recallDuration: 1000,
      noise: 0,
      matchThreshold: 0.5,
      minDwell: 5,
    });
    expect(p.overlapStart).toBeUndefined();
  });

  it('describes every parameter with a unit', () => {
    for (const name of Object.keys(bcpnnSequences.params.shape)) {
      expect(bcpnnSequences.paramInfo[name]?.unit, name).toBeTruthy();
      expect(bcpnnSequences.paramInfo[name]?.description, name).toBeTruthy();
    }
  });

  it('rejects negative values, naming the field', () => {
    expect(rejection({ noise: -0.1 })[0]).toMatch(/^noise: noise must be .*>= 0/);
    expect(rejection({ restDuration: -5 })[0]).toMatch(/^restDuration: /);
  });

  it('rejects non-finite values, naming the field', () => {
    // JSON.parse turns 1e999 into Infinity: the way a file can carry it.
    expect(rejection(JSON.parse('{"tauP": 1e999}'))[0]).toMatch(/^tauP: tauP must be a finite number/);
    expect(rejection({ gain: Number.NaN })[0]).toMatch(/^gain: /);
    expect(rejection({ cueStrength: '20' })[0]).toMatch(/^cueStrength: /);
  });

  it('rejects fractional counts', () => {
    expect(rejection({ minicolumns: 20.5 })[0]).toMatch(/^minicolumns: minicolumns must be an integer/);
  });

  it('rejects a time constant shorter than dt', () => {
    expect(rejection({ tauP: 0.5 })).toEqual(['tauP: tauP must be >= dt (1 ms), got 0.5']);
    expect(rejection({ dt: 2, tauZPost: 1.5 })[0]).toMatch(/^tauZPost: tauZPost must be >= dt \(2 ms\)/);
  });

  it('rejects overlapStart 0 and an overlap window past the end of the sequence', () => {
    expect(rejection({ overlapStart: 0 })[0]).toMatch(/^overlapStart: /);
    expect(rejection({ overlapStart: 5, overlapLength: 2 })[0]).toMatch(
      /^overlapStart: overlapStart \+ overlapLength must be <= sequenceLength \(6\)/,
    );
    expect(rejection({ overlapLength: 5 })[0]).toMatch(
      /^overlapStart: the default overlapStart .* set overlapStart to 1/,
    );
    expect(bcpnnSequences.params.safeParse({ overlapLength: 5, overlapStart: 1 }).success).toBe(true);
  });

  it('keeps rejecting generated sequences whose default overlap window would start at the cue', () => {
    // L = 2, k = 1: floor((L - k)/2) = 0, and the generator could copy into the cues.
    expect(rejection({ sequenceLength: 2 })[0]).toMatch(
      /^overlapStart: the default overlapStart floor\(\(L - k\)\/2\) = 0 .* set overlapStart to 1/,
    );
    expect(bcpnnSequences.params.safeParse({ sequenceLength: 2, overlapStart: 1 }).success).toBe(true);
  });

  it('accepts explicit sequences of length 2 under the defaults and compares position 1 in achievedOverlap', () => {
    // Position 1: [1, 2] against [1, 0] agree in hypercolumn 0 only, overlap 1/2 (by hand).
    const sequences = [
      [
        [0, 1],
        [1, 2],
      ],
      [
        [2, 3],
        [1, 0],
      ],
    ];
    const parsed = bcpnnSequences.params.safeParse({ sequences, minicolumns: 4 });
    expect(parsed.success).toBe(true);
    const p = bcpnnSequences.params.parse({ sequences, minicolumns: 4, recallDuration: 100 });
    expect(resolveShape(p).start).toBe(1);
    expect(bcpnnSequences.run(p, 1).metrics['achievedOverlap']).toBe(0.5);
  });

  it('accepts explicit sequences with any overlapLength up to L - 1 when overlapStart is left out', () => {
    const three = [
      [[0], [1], [2]],
      [[3], [4], [5]],
    ];
    for (const overlapLength of [0, 1, 2]) {
      expect(
        bcpnnSequences.params.safeParse({ sequences: three, minicolumns: 6, overlapLength }).success,
        `k = ${overlapLength}`,
      ).toBe(true);
    }
    const two = [
      [[0], [1]],
      [[2], [3]],
    ];
    for (const overlapLength of [0, 1]) {
      expect(
        bcpnnSequences.params.safeParse({ sequences: two, minicolumns: 4, overlapLength }).success,
        `k = ${overlapLength}`,
      ).toBe(true);
    }
  });

  it('rejects zero hypercolumns and unknown parameter names', () => {
    expect(rejection({ hypercolumns: 0 })[0]).toMatch(/^hypercolumns: /);
    expect(rejection({ hypercolumn: 10 })[0]).toMatch(/unknown parameter "hypercolumn"/);
  });

  it('rejects networks beyond the size caps', () => {
    expect(rejection({ hypercolumns: 200, minicolumns: 200 })[0]).toMatch(
      /^minicolumns: hypercolumns x minicolumns must be <= 20000/,
    );
    expect(rejection({ recallDuration: 1e8 })[0]).toMatch(/^recallDuration: /);
    // Shared units (M < K*L) make up to N unit classes: capped at 5000 units.
    expect(rejection({ hypercolumns: 1000, minicolumns: 10 })[0]).toMatch(
      /^minicolumns: when minicolumns < sequenceCount x sequenceLength/,
    );
    expect(bcpnnSequences.params.safeParse({ hypercolumns: 1000, minicolumns: 12 }).success).toBe(true);
  });

  it('takes the shape from explicit sequences and checks that given values agree', () => {
    const sequences = [
      [
        [0, 1],
        [1, 2],
        [2, 0],
      ],
      [
        [3, 3],
        [1, 2],
        [0, 0],
      ],
    ];
    const p = bcpnnSequences.params.parse({ sequences, minicolumns: 4 });
    expect([p.hypercolumns, p.sequenceCount, p.sequenceLength]).toEqual([2, 2, 3]);
    expect(bcpnnSequences.params.parse({ ...p }).sequences).toEqual(sequences);
    expect(rejection({ sequences, minicolumns: 4, hypercolumns: 3 })[0]).toMatch(
      /^hypercolumns: hypercolumns \(3\) must equal/,
    );
    expect(rejection({ sequences, minicolumns: 3 })[0]).toMatch(/^sequences: .*minicolumn 3; minicolumns are 0\.\.2/);
    expect(
      rejection({
        sequences: [
          [
            [0, 1],
            [1, 2],
          ],
          [
            [0, 1],
            [2, 2],
          ],
        ],
        minicolumns: 4,
      })[0],
    ).toMatch(/cue patterns must differ/);
    expect(rejection({ sequences: [[[0, 1], [1]]], minicolumns: 4 })[0]).toMatch(
      /^sequences: pattern 1 of sequence 0 has 1 entries/,
    );
  });
});
