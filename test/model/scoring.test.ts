import { describe, expect, it } from 'vitest';
import { activeAt, decodeRuns, NONE, scoreRecall } from '../../shared/models/bcpnn-sequences/scoring.js';
import { activeFromMatches } from './helpers.js';

/** Active ids from a compact description: [id, steps] pairs. */
function steps(...parts: [number, number][]): number[] {
  return parts.flatMap(([id, n]) => new Array<number>(n).fill(id));
}

describe('decoding matches into active patterns', () => {
  it('takes the argmax when it reaches the threshold and none below it', () => {
    // Three steps of two patterns: clear 0, tie-free 1, nothing above 0.5.
    const matches = [0.9, 0.1, 0.3, 0.6, 0.45, 0.4];
    expect(Array.from(activeFromMatches(matches, 2, 0.5))).toEqual([0, 1, NONE]);
  });

  it('counts a maximum exactly at the threshold as active', () => {
    expect(Array.from(activeFromMatches([0.5, 0.2], 2, 0.5))).toEqual([0]);
  });

  it('takes the lowest id on a tie and reads the patterns from the given offset', () => {
    // Row 0 is [0.9, 0.1] (ignored); row 1 at offset 2 is a tie [0.7, 0.7].
    expect(activeAt([0.9, 0.1, 0.7, 0.7], 2, 2, 0.5)).toBe(0);
    expect(activeAt([0.9, 0.1, 0.2, 0.7], 2, 2, 0.5)).toBe(1);
  });
});

describe('runs and scoring', () => {
  it('drops runs shorter than minDwell and merges neighbours that became equal', () => {
    const active = steps([0, 10], [1, 2], [0, 6], [2, 8]);
    const runs = decodeRuns(active, 1, 5);
    expect(runs.map((r) => [r.id, r.length])).toEqual([
      [0, 18],
      [2, 8],
    ]);
  });

  it('measures minDwell in ms, so the time step matters', () => {
    const active = steps([0, 10], [1, 3], [2, 10]);
    expect(decodeRuns(active, 1, 5).map((r) => r.id)).toEqual([0, 2]);
    expect(decodeRuns(active, 2, 5).map((r) => r.id)).toEqual([0, 1, 2]);
  });

  it('keeps a long silence between two visits of one pattern, so the pattern counts twice', () => {
    const active = steps([0, 10], [NONE, 20], [0, 10], [1, 10]);
    const score = scoreRecall(active, [0, 1], 1, 5);
    expect(score.correctPrefix).toBe(1);
    expect(score.firstError).toBe(1);
  });

  it('recalls a sequence when its first L decoded ids match, whatever follows', () => {
    const active = steps([0, 12], [1, 7], [NONE, 2], [2, 9], [0, 30]);
    const score = scoreRecall(active, [0, 1, 2], 1, 5);
    expect(score).toEqual({ correctPrefix: 3, firstError: null, dwellMs: [12, 7, 9] });
  });

  it('reports the first missing position when recall stops early', () => {
    const score = scoreRecall(steps([0, 12], [1, 7]), [0, 1, 2], 1, 5);
    expect(score.correctPrefix).toBe(2);
    expect(score.firstError).toBe(2);
  });

  it('reports position 0 when the cue pattern itself never shows', () => {
    const score = scoreRecall(steps([NONE, 40]), [0, 1], 1, 5);
    expect(score).toEqual({ correctPrefix: 0, firstError: 0, dwellMs: [] });
  });
});
