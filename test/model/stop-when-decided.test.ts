import { describe, expect, it } from 'vitest';
import { DecisionWatch } from '../../shared/models/bcpnn-sequences/decision-watch.js';
import { bcpnnSequences } from '../../shared/models/bcpnn-sequences/index.js';
import { decodeRuns, NONE, scoreRecall } from '../../shared/models/bcpnn-sequences/scoring.js';
import { createRandom } from '../../shared/random.js';
import { params } from './helpers.js';

/** Index of the step after which the watch calls the recall decided, or null. */
function decisionStep(active: readonly number[], expected: readonly number[], dt: number, minDwell: number) {
  const watch = new DecisionWatch(dt, minDwell);
  watch.reset(expected);
  for (let t = 0; t < active.length; t++) if (watch.push(active[t]!)) return t;
  return null;
}

/** Decoded pattern ids (silences left out), as scoring reads them. */
const patternIds = (active: readonly number[], dt: number, minDwell: number): number[] =>
  decodeRuns(active, dt, minDwell)
    .filter((r) => r.id !== NONE)
    .map((r) => r.id);

/** Runs written out: [id, steps] pairs to an array of active ids (-1 = none). */
const runs = (...pairs: [number, number][]): number[] => pairs.flatMap(([id, n]) => Array<number>(n).fill(id));

describe('deciding a recall early (stopWhenDecided)', () => {
  // Expected steps worked out by hand from docs/model.md, "Decoding and scoring".
  it('decides on the step the last expected pattern has lasted minDwell', () => {
    // 0 for 10 steps, 1 for 10, 2 from step 20: with minDwell 5 ms and dt 1,
    // pattern 2 is kept once it lasted 5 steps, at step 24.
    expect(decisionStep(runs([0, 10], [1, 10], [2, 30]), [0, 1, 2], 1, 5)).toBe(24);
    // dt 2: 3 steps are 6 ms >= 5 ms, so step 22.
    expect(decisionStep(runs([0, 10], [1, 10], [2, 30]), [0, 1, 2], 2, 5)).toBe(22);
  });

  it('decides on the first wrong pattern once it has lasted minDwell', () => {
    // 0, then 2 where 1 is expected: wrong at position 1, kept at step 14.
    expect(decisionStep(runs([0, 10], [2, 30]), [0, 1, 2], 1, 5)).toBe(14);
    // A silence of minDwell or more separates two visits of 0: the second visit is wrong.
    expect(decisionStep(runs([0, 10], [-1, 5], [0, 10]), [0, 1], 1, 5)).toBe(19);
  });

  it('does not decide on runs shorter than minDwell, nor on a return to the same pattern across a short gap', () => {
    // 2 for 4 steps is dropped; 0, gap of 3, 0 again merge into one visit.
    expect(decisionStep(runs([0, 10], [2, 4], [0, 10], [-1, 3], [0, 20]), [0, 1], 1, 5)).toBeNull();
    // Then 1 comes: decided at its fifth step.
    expect(decisionStep(runs([0, 10], [2, 4], [0, 10], [1, 9]), [0, 1], 1, 5)).toBe(28);
  });

  it('never decides while positions are still missing', () => {
    expect(decisionStep(runs([0, 10], [1, 300]), [0, 1, 2], 1, 5)).toBeNull();
    expect(decisionStep(runs([-1, 200]), [0, 1], 1, 5)).toBeNull();
  });

  it('scores the recall up to its decision exactly as the whole recall, on random decodings', () => {
    // Reference: scoreRecall over the whole recall (what a full run scores).
    const rng = createRandom(77, 'test-watch');
    let decided = 0;
    for (let trial = 0; trial < 3000; trial++) {
      const L = 2 + rng.int(4);
      const expected = Array.from({ length: L }, () => rng.int(5));
      const dt = [0.5, 1, 2][rng.int(3)]!;
      const minDwell = [0, 3, 5, 10][rng.int(4)]!;
      const active: number[] = [];
      // Mostly the expected ids in order, with random detours, silences and flickers.
      let position = 0;
      while (active.length < 400) {
        const r = rng.uniform();
        const id = r < 0.6 ? (expected[Math.min(position++, L - 1)] ?? 0) : r < 0.75 ? -1 : rng.int(5);
        for (let n = 1 + rng.int(r < 0.9 ? 20 : 4); n > 0; n--) active.push(id);
      }
      const full = scoreRecall(active, expected, dt, minDwell);
      const t = decisionStep(active, expected, dt, minDwell);
      if (t === null) continue;
      decided++;
      const early = scoreRecall(active.slice(0, t + 1), expected, dt, minDwell);
      expect(early.correctPrefix).toBe(full.correctPrefix);
      expect(early.firstError).toBe(full.firstError);
      // Not late either: one step earlier, every decoded pattern id was the
      // expected one and some were still missing, so nothing was decided yet.
      const before = patternIds(active.slice(0, t), dt, minDwell);
      expect(before.length).toBeLessThan(L);
      expect(before).toEqual(expected.slice(0, before.length));
      expect(patternIds(active.slice(0, t + 1), dt, minDwell).length).toBe(before.length + 1);
    }
    expect(decided).toBeGreaterThan(1500);
  });

  it('gives the same success and per-sequence counts as the full recall on many seeds, with and without noise', () => {
    let compared = 0;
    const outcomes = new Set<string>();
    for (const base of [
      { patternOverlap: 0.6, overlapLength: 2 },
      { patternOverlap: 0.8, overlapLength: 2, noise: 0.5 },
      { patternOverlap: 1, overlapLength: 1, tauZPre: 100, noise: 0.3 },
      { hypercolumns: 6, minicolumns: 8, sequenceCount: 3, sequenceLength: 5, patternOverlap: 0.5, noise: 1 },
    ]) {
      for (let seed = 1; seed <= 12; seed++) {
        const full = bcpnnSequences.run(params(base), seed).metrics;
        const early = bcpnnSequences.run(params({ ...base, stopWhenDecided: true }), seed).metrics;
        for (const name of [
          'success',
          'recalledFraction',
          'meanCorrectPrefix',
          'correctPrefix',
          'firstError',
          'diverged',
          'achievedOverlap',
          'distinctPatterns',
        ]) {
          expect(early[name], `${JSON.stringify(base)} seed ${seed}: ${name}`).toEqual(full[name]);
        }
        // Only the last run of a recalled sequence is cut short.
        if (full.meanDwellMs === null) expect(early.meanDwellMs).toBeNull();
        else expect(early.meanDwellMs as number).toBeLessThanOrEqual(full.meanDwellMs as number);
        if ((full.recalledFraction as number) === 0) expect(early.meanDwellMs).toBe(full.meanDwellMs);
        outcomes.add(`${String(full.success)} ${String(full.recalledFraction)}`);
        compared++;
      }
    }
    expect(compared).toBe(48);
    // The seeds cover success, failure and partial recall.
    expect(outcomes.size).toBeGreaterThanOrEqual(3);
  });

  it('follows the full recall step for step until it stops, on a shorter trace, and leaves the next recall its noise', () => {
    // With noise 0.5 and no overlap both sequences are recalled, so the first
    // recall stops early and the second must still see the noise of a full run.
    const base = { noise: 0.5 };
    for (const seed of [1, 2, 3]) {
      const full = bcpnnSequences.run(params(base), seed, { trace: true }).trace!;
      const early = bcpnnSequences.run(params({ ...base, stopWhenDecided: true }), seed, { trace: true }).trace!;
      expect(early.length).toBe(full.length);
      early.forEach((panel, s) => {
        const whole = full[s]!;
        expect(panel.steps).toBeLessThanOrEqual(whole.steps);
        expect(panel.values.length).toBe(panel.steps * panel.seriesLabels.length);
        // Same noise, same arithmetic: the same numbers, not merely close ones.
        expect(Array.from(panel.values)).toEqual(Array.from(whole.values.subarray(0, panel.values.length)));
      });
      expect(early[0]!.steps).toBeLessThan(full[0]!.steps);
    }
  });

  it('is off by default and rejects anything but true or false, naming the field', () => {
    expect(params({}).stopWhenDecided).toBe(false);
    const result = bcpnnSequences.params.safeParse({ stopWhenDecided: 'yes' });
    expect(result.success).toBe(false);
    expect(result.error?.issues[0]?.path).toEqual(['stopWhenDecided']);
    expect(result.error?.issues[0]?.message).toMatch(/^stopWhenDecided must be true or false/);
  });
});
