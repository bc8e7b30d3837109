import { describe, expect, it } from 'vitest';
import { trainTrial } from '../../shared/models/bcpnn-sequences/index.js';
import type { BcpnnParams } from '../../shared/models/bcpnn-sequences/params.js';
import { resolveShape } from '../../shared/models/bcpnn-sequences/params.js';
import { Recaller } from '../../shared/models/bcpnn-sequences/recall.js';
import { sharedLayout, sharedLayoutSize, unitLayout } from '../../shared/models/bcpnn-sequences/recall-layout.js';
import { createRandom } from '../../shared/random.js';
import { params } from './helpers.js';

function layoutOf(p: BcpnnParams) {
  const { set, net } = trainTrial(p, 1);
  return { layout: sharedLayout(net, set, resolveShape(p)), net };
}

/** Every recall of a trial with the given layout kind: active pattern per step and the matches. */
function recallAll(p: BcpnnParams, seed: number, layoutKind: 'unit' | 'shared') {
  const shape = resolveShape(p);
  const { set, net } = trainTrial(p, seed);
  const layout = layoutKind === 'unit' ? unitLayout(net, set, shape) : sharedLayout(net, set, shape);
  const recaller = new Recaller(net, set, p, shape, layout);
  const out: { active: Int32Array; trace: Float64Array }[] = [];
  for (let s = 0; s < shape.K; s++) {
    const active = new Int32Array(recaller.steps);
    const trace = new Float64Array(recaller.steps * recaller.nPatterns);
    recaller.run(s, null, active, trace);
    out.push({ active, trace });
  }
  return { out, size: layout.size, N: shape.N };
}

describe('the recall layout', () => {
  it('puts hypercolumns that hold the same classes in another order into one kind, one representative per class', () => {
    // Worked by hand: pattern 0 = minicolumn 0 everywhere; pattern 1 = 1, 1, 2. Each hypercolumn holds
    // one unit of {0}, one of {1} and one of no pattern (at 2, 2 and 1): one kind of three hypercolumns.
    const { layout } = layoutOf(
      params({
        sequences: [
          [
            [0, 0, 0],
            [1, 1, 2],
          ],
        ],
        minicolumns: 3,
      }),
    );
    expect(layout.size).toBe(3);
    expect(layout.counted).toBe(true);
    expect(layout.types).toBe(1);
    expect([...layout.typeStart]).toEqual([0, 3]);
    expect([...layout.typeWeight]).toEqual([3]);
    expect([...layout.repCount]).toEqual([1, 1, 1]);
    expect([...layout.repWeight]).toEqual([3, 3, 3]);
    expect(new Set(layout.repClass).size).toBe(3);
    expect([...layout.patternRep]).toEqual([0, 1]);
  });

  it('keeps hypercolumns with different numbers of units per class apart', () => {
    // Worked by hand: hypercolumn 0 holds {0} at 0, {1} at 1 and two idle units; in hypercolumn 1 both
    // patterns use unit 0 ({0,1}) and three units are idle. Kinds: [{0}, {1}, idle x2], [{0,1}, idle x3].
    const { layout, net } = layoutOf(
      params({
        sequences: [
          [
            [0, 0],
            [1, 0],
          ],
        ],
        minicolumns: 4,
      }),
    );
    expect(layout.size).toBe(5);
    expect(layout.types).toBe(2);
    expect([...layout.typeStart]).toEqual([0, 3, 5]);
    expect([...layout.typeWeight]).toEqual([1, 1]);
    expect([...layout.repCount]).toEqual([1, 1, 2, 1, 3]);
    expect([...layout.repWeight]).toEqual([1, 1, 2, 1, 3]);
    // Pattern k's representative in kind t at patternRep[k * 2 + t].
    expect([...layout.patternRep]).toEqual([0, 3, 1, 3]);
    // The idle units of both kinds are one class: units 2 and 5 (hypercolumn 0 unit 2, hypercolumn 1 unit 1).
    expect(layout.repClass[2]).toBe(net.classOf[2]);
    expect(layout.repClass[4]).toBe(net.classOf[5]);
    expect(layout.repClass[2]).toBe(layout.repClass[4]);
  });

  it('updates every unit once when recall has noise, and one unit per class of each kind without', () => {
    const shape = resolveShape(params({}));
    const noisy = params({ noise: 0.3 });
    const { set, net } = trainTrial(noisy, 2);
    const withNoise = new Recaller(net, set, noisy, shape).layout;
    expect(withNoise.size).toBe(shape.N);
    expect(withNoise.counted).toBe(false);
    // Default shape: 12 patterns on distinct minicolumns of every hypercolumn of 20, the other 8 idle:
    // every hypercolumn holds 12 one-unit classes and one idle class of 8 (13 representatives, one kind).
    const quiet = params({});
    const { set: quietSet, net: quietNet } = trainTrial(quiet, 2);
    const layout = new Recaller(quietNet, quietSet, quiet, shape).layout;
    expect(layout.size).toBe(13);
    expect(layout.types).toBe(1);
    expect([...layout.repCount].sort((x, y) => x - y)).toEqual([...Array(12).fill(1), 8]);
  });

  it('refuses noise on a layout whose units stand for several', () => {
    const p = params({});
    const shape = resolveShape(p);
    const { set, net } = trainTrial(p, 3);
    const recaller = new Recaller(net, set, p, shape);
    const active = new Int32Array(recaller.steps);
    expect(() => recaller.run(0, createRandom(3, 'noise'), active, null)).toThrow(/unit layout/);
  });

  it('gives the active pattern of every step and matches within 1e-12 of the per-unit loop, without noise', () => {
    // The per-unit loop is the one checked against the step-by-step reference (fast-vs-reference.test.ts).
    const configs = [
      params({}),
      params({ patternOverlap: 0.5, overlapLength: 3 }),
      params({ patternOverlap: 1, overlapLength: 2 }),
      params({ hypercolumns: 16, minicolumns: 50, weightGain: 10 / 16 }),
      params({ hypercolumns: 4, minicolumns: 4, sequenceLength: 3, sequenceCount: 1 }),
    ];
    let compressed = 0;
    for (const p of configs) {
      for (let seed = 1; seed <= 6; seed++) {
        const unit = recallAll(p, seed, 'unit');
        const shared = recallAll(p, seed, 'shared');
        if (shared.size < shared.N) compressed++;
        unit.out.forEach((u, s) => {
          const v = shared.out[s]!;
          expect([...v.active]).toEqual([...u.active]);
          let worst = 0;
          for (let i = 0; i < u.trace.length; i++) worst = Math.max(worst, Math.abs(u.trace[i]! - v.trace[i]!));
          expect(worst).toBeLessThanOrEqual(1e-12);
        });
      }
    }
    // The comparison means something only where the shared layout is smaller than the network.
    expect(compressed).toBeGreaterThanOrEqual(24);
  });

  it('counts the units of the layout from the patterns alone, as training forms the classes', () => {
    const configs = [
      params({}),
      params({ patternOverlap: 0.5, overlapLength: 3 }),
      params({ minicolumns: 8 }),
      params({ hypercolumns: 6, minicolumns: 5, sequenceCount: 3, sequenceLength: 3 }),
    ];
    for (const p of configs) {
      for (let seed = 1; seed <= 5; seed++) {
        const { set, net } = trainTrial(p, seed);
        const shape = resolveShape(p);
        expect(sharedLayoutSize(set, shape)).toBe(sharedLayout(net, set, shape).size);
      }
    }
  });
});
