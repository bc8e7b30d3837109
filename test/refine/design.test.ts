import { describe, expect, it } from 'vitest';
import { createRandom, deriveSeed } from '../../shared/random.js';
import { designTrials, nextDesign, type RefineAxis } from '../../shared/refine/design.js';
import { estimateTrials } from '../../shared/refine/estimate.js';
import { midpoint } from '../../shared/refine/midpoint.js';
import type { Point } from '../../shared/schemas/records.js';

const settings = { level: 0.5, confidence: 0.95, replicates: { start: 4, max: 16 }, rounds: 3 };
const x: RefineAxis = { name: 'x', whole: false, log: false };

/** A made-up world: success probability falls from 1 to 0 across x = border (logistic, slope 30). */
function world(border: (point: Point) => number, seed = 1) {
  return (point: Point, replicate: number): boolean => {
    const p = 1 / (1 + Math.exp(30 * ((point['x'] as number) - border(point))));
    return createRandom(deriveSeed(seed, `${JSON.stringify(point)}:${replicate}`)).uniform() < p;
  };
}

/** Run the design loop to the end against a world, in full batches. */
function runToEnd(basePoints: Point[], along: RefineAxis[], truth: (p: Point, r: number) => boolean) {
  const results = new Map<string, boolean>();
  const key = (p: Point, r: number) => `${JSON.stringify(p)}#${r}`;
  for (let pass = 0; pass < 100; pass++) {
    const design = nextDesign({ basePoints, along, settings, outcome: (p, r) => results.get(key(p, r)) });
    if (design.complete) return { design, results };
    for (const t of designTrials(design))
      if (!results.has(key(t.point, t.replicate))) results.set(key(t.point, t.replicate), truth(t.point, t.replicate));
  }
  throw new Error('design never completed');
}

const row = (values: number[], extra: Point = {}): Point[] => values.map((v) => ({ ...extra, x: v }));

describe('midpoints', () => {
  it('puts whole-number midpoints only where a whole number lies between', () => {
    const whole = { whole: true, log: false };
    expect(midpoint(whole, 2, 6)).toBe(4);
    expect(midpoint(whole, 2, 5)).toBe(3);
    expect(midpoint(whole, 3, 4)).toBeUndefined();
    expect(midpoint({ whole: false, log: false }, 0.2, 0.4)).toBe(0.3);
    // Geometric mean of 10 and 1000 is 100 (by hand).
    expect(midpoint({ whole: false, log: true }, 10, 1000)).toBe(100);
    expect(midpoint({ whole: false, log: false }, 1, 1.0000000000001)).toBeUndefined();
  });
});

describe('next design', () => {
  it('starts every point at the first batch before any result', () => {
    const design = nextDesign({ basePoints: row([0, 0.5, 1]), along: [x], settings, outcome: () => undefined });
    expect(design.points.map((p) => p.replicates)).toEqual([4, 4, 4]);
    expect(design.complete).toBe(false);
    expect(design.trials).toBe(12);
  });

  it('inserts midpoints only around the border, down to the given rounds', () => {
    const { design } = runToEnd(
      row([0, 0.25, 0.5, 0.75, 1]),
      [x],
      world(() => 0.6),
    );
    const xs = design.points.map((p) => p.point['x'] as number).sort((a, b) => a - b);
    // No midpoint far from 0.6 (between 0 and 0.5, the rate is near 1 everywhere).
    expect(xs.filter((v) => v > 0 && v < 0.5)).toEqual([0.25]);
    // Three rounds split the interval [0.5, 0.75] down to width 0.03125, around 0.6.
    const inserted = design.points.filter((p) => p.round > 0).map((p) => p.point['x'] as number);
    expect(inserted.length).toBeGreaterThanOrEqual(3);
    expect(Math.max(...design.points.map((p) => p.round))).toBe(3);
    for (const v of inserted) expect(Math.abs(v - 0.6)).toBeLessThan(0.15);
  });

  it('gives the same design whatever order the results came in and however far a run got', () => {
    const base = [...row([0, 0.2, 0.4, 0.6, 0.8, 1], { y: 1 }), ...row([0, 0.2, 0.4, 0.6, 0.8, 1], { y: 2 })];
    const truth = world((p) => (p['y'] === 1 ? 0.3 : 0.7), 7);
    const full = runToEnd(base, [x], truth);
    // Replay a partial result set: every third trial of the final design dropped.
    const partial = new Map([...full.results].filter((_, i) => i % 3 !== 0));
    const resumed = (() => {
      const results = new Map(partial);
      for (let pass = 0; pass < 100; pass++) {
        const design = nextDesign({
          basePoints: base,
          along: [x],
          settings,
          outcome: (p, r) => results.get(`${JSON.stringify(p)}#${r}`),
        });
        if (design.complete) return design;
        for (const t of designTrials(design)) {
          const k = `${JSON.stringify(t.point)}#${t.replicate}`;
          if (!results.has(k)) results.set(k, truth(t.point, t.replicate));
        }
      }
      throw new Error('never completed');
    })();
    const trials = (d: typeof resumed) =>
      [...designTrials(d)].map((t) => `${JSON.stringify(t.point)}#${t.replicate}`).sort();
    expect(trials(resumed)).toEqual(trials(full.design));
    // Results handed over in reverse order give the same design too.
    const reversed = new Map([...full.results].reverse());
    const again = nextDesign({
      basePoints: base,
      along: [x],
      settings,
      outcome: (p, r) => reversed.get(`${JSON.stringify(p)}#${r}`),
    });
    expect(trials(again)).toEqual(trials(full.design));
  });

  it('only ever extends the replicates of a point as results come in', () => {
    const base = row([0, 0.5, 1]);
    const truth = world(() => 0.5, 3);
    const results = new Map<string, boolean>();
    let previous = new Map<string, number>();
    for (let pass = 0; pass < 50; pass++) {
      const design = nextDesign({
        basePoints: base,
        along: [x],
        settings,
        outcome: (p, r) => results.get(`${JSON.stringify(p)}#${r}`),
      });
      for (const p of design.points)
        expect(p.replicates).toBeGreaterThanOrEqual(previous.get(JSON.stringify(p.point)) ?? 0);
      previous = new Map(design.points.map((p) => [JSON.stringify(p.point), p.replicates]));
      if (design.complete) return;
      // One trial at a time: the slowest a result stream can be.
      const next = [...designTrials(design)].find((t) => !results.has(`${JSON.stringify(t.point)}#${t.replicate}`))!;
      results.set(`${JSON.stringify(next.point)}#${next.replicate}`, truth(next.point, next.replicate));
    }
  });

  it('bounds its trials by the best and worst cases of the estimate', () => {
    const base = row([0, 0.2, 0.4, 0.6, 0.8, 1]);
    const range = estimateTrials(base, [x], settings);
    // Best: 6 points x 4; worst: 5 gaps each split to depth 3 adds 7 points -> 41 points x 16 (by hand).
    expect(range).toEqual({ best: 24, worst: 656, bestPoints: 6, worstPoints: 41 });
    const { design } = runToEnd(
      base,
      [x],
      world(() => 0.5, 11),
    );
    expect(design.trials).toBeGreaterThanOrEqual(range.best);
    expect(design.trials).toBeLessThanOrEqual(range.worst);
  });
});
