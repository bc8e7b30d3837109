import { describe, expect, it } from 'vitest';
import { BANDWIDTH_GRID, leftOutLocations } from '../../coordinator/summarize/bandwidth-selection.js';
import { NO_POINT_IN_REACH, wilsonEffective } from '../../coordinator/summarize/local-likelihood.js';
import {
  type BinomialPoint,
  prepareSmoothingData,
  unitCoordinate,
} from '../../coordinator/summarize/local-likelihood-data.js';
import { estimateAt, smoothSuccessField } from '../../coordinator/summarize/local-likelihood-field.js';
import { createRandom } from '../../shared/random.js';

const expit = (t: number): number => 1 / (1 + Math.exp(-t));

/** `count` points on a 4 x ceil(count/4) lattice inside the unit square, `trials` each, successes from `rate`. */
function lattice(count: number, trials: number, successes: (x: number, y: number) => number): BinomialPoint[] {
  const rows = Math.ceil(count / 4);
  return Array.from({ length: count }, (_, i) => {
    const x = ((i % 4) + 0.5) / 4;
    const y = (Math.floor(i / 4) + 0.5) / rows;
    return { x, y, trials, successes: successes(x, y) };
  });
}

/** Points drawn uniformly with success probability `truth`, from the project's seeded generator. */
function sampled(count: number, trials: number, truth: (x: number, y: number) => number, seed: number) {
  const rng = createRandom(seed, 'smoothing-test');
  return Array.from({ length: count }, () => {
    const x = rng.uniform();
    const y = rng.uniform();
    let successes = 0;
    for (let t = 0; t < trials; t++) if (rng.uniform() < truth(x, y)) successes += 1;
    return { x, y, trials, successes };
  });
}

describe('smoothSuccessField guards', () => {
  const grid = { nx: 10, ny: 10 };

  it('says there are too few points instead of estimating from nine', () => {
    const field = smoothSuccessField(
      lattice(9, 4, (x) => (x < 0.5 ? 1 : 3)),
      grid,
    );
    expect(field.ok).toBe(false);
    if (!field.ok) expect(field.reason).toBe('too few points to estimate: 9 sampled points, at least 10 needed');
  });

  it('counts replicates of one location as one point', () => {
    const points = lattice(9, 4, (x) => (x < 0.5 ? 1 : 3));
    const replicated = [...points, { ...points[0], successes: 2 } as BinomialPoint];
    const field = smoothSuccessField(replicated, grid);
    expect(field.counts).toEqual({ points: 9, trials: 40, successes: 19 });
    expect(field.ok).toBe(false);
  });

  it('says every trial succeeded when none failed', () => {
    const field = smoothSuccessField(
      lattice(12, 4, () => 4),
      grid,
    );
    expect(field.ok).toBe(false);
    if (!field.ok) expect(field.reason).toBe('every trial succeeded (48 trials at 12 points)');
  });

  it('says every trial failed when none succeeded', () => {
    const field = smoothSuccessField(
      lattice(12, 1, () => 0),
      grid,
    );
    if (!field.ok) expect(field.reason).toBe('every trial failed (12 trials at 12 points)');
    expect(field.ok).toBe(false);
  });

  it('says so when only one sampled point had any success', () => {
    const points = lattice(12, 3, () => 0);
    points[5] = { ...(points[5] as BinomialPoint), successes: 3 };
    const field = smoothSuccessField(points, grid);
    if (!field.ok) expect(field.reason).toBe('successes at only one of 12 sampled points');
    expect(field.ok).toBe(false);
  });

  it('ignores points without trials and says when nothing is left', () => {
    const field = smoothSuccessField(
      lattice(12, 0, () => 0),
      grid,
    );
    expect(field.counts.points).toBe(0);
    if (!field.ok) expect(field.reason).toBe('no trials to estimate from');
    expect(field.ok).toBe(false);
  });

  it('says when no candidate bandwidth can predict every left-out point', () => {
    const points = lattice(16, 4, (x, y) => (x + y < 1 ? 3 : 1));
    const field = smoothSuccessField(points, { ...grid, candidates: [0.001, 0.002] });
    expect(field.ok).toBe(false);
    if (field.ok) return;
    expect(field.reason).toBe('no candidate bandwidth predicts every left-out point');
    expect(field.curve.map((c) => c.logLikelihood)).toEqual([null, null]);
    expect(field.curve[0]?.reason).toMatch(/^a left-out point has no estimate/);
  });

  it('rejects malformed points with the field named', () => {
    const points = lattice(12, 4, () => 2);
    expect(() => smoothSuccessField([...points, { x: 0.5, y: 0.5, trials: 2, successes: 3 }], grid)).toThrow(
      /points\.12\.successes: successes must not exceed trials/,
    );
    expect(() => smoothSuccessField([{ x: 1.5, y: 0.5, trials: 2, successes: 1 }], grid)).toThrow(/points\.0\.x/);
    expect(() => smoothSuccessField(points, { nx: 0, ny: 10 })).toThrow(RangeError);
  });
});

describe('smoothSuccessField estimates', () => {
  // The truth p(x, y) = expit(12 (y - 0.25 - 0.5 x^2)) has its 50% border on
  // the curve y = 0.25 + 0.5 x^2; 600 uniform points with 4 trials each should
  // find it. Expected behaviour of any consistent smoother (common practice,
  // no source).
  const truth = (x: number, y: number): number => expit(12 * (y - 0.25 - 0.5 * x * x));
  const points = sampled(600, 4, truth, 7);
  const nx = 20;
  const ny = 20;
  const field = smoothSuccessField(points, { nx, ny });

  it('chooses a bandwidth from the grid by cross-validation over the whole grid', () => {
    expect(field.ok).toBe(true);
    if (!field.ok) return;
    expect(BANDWIDTH_GRID).toContain(field.bandwidth);
    expect(field.curve.length).toBe(BANDWIDTH_GRID.length);
    const best = Math.max(...field.curve.map((c) => c.logLikelihood ?? -Infinity));
    expect(field.curve.find((c) => c.bandwidth === field.bandwidth)?.logLikelihood).toBe(best);
    // A curved border needs a local fit: neither the smallest nor the (nearly global) largest candidate.
    expect(field.bandwidth).toBeGreaterThan(0.05);
    expect(field.bandwidth).toBeLessThan(0.5);
  });

  it('puts the 50% border within 0.05 of the true one in every column', () => {
    expect(field.ok).toBe(true);
    if (!field.ok) return;
    for (let i = 0; i < nx; i++) {
      const x = (i + 0.5) / nx;
      // Rows run upwards in y: find where the column crosses 0.5, linearly between cell centres.
      let crossing: number | null = null;
      for (let j = 0; j + 1 < ny; j++) {
        const a = field.p[j * nx + i];
        const b = field.p[(j + 1) * nx + i];
        if (a === null || a === undefined || b === null || b === undefined) continue;
        if (a < 0.5 && b >= 0.5) crossing = (j + 0.5 + (0.5 - a) / (b - a)) / ny;
      }
      expect(crossing, `column ${i}`).not.toBeNull();
      expect(Math.abs((crossing ?? 0) - (0.25 + 0.5 * x * x)), `column ${i}`).toBeLessThan(0.05);
    }
  });

  it('stays within 0.15 of the true probability in every cell', () => {
    expect(field.ok).toBe(true);
    if (!field.ok) return;
    field.p.forEach((p, cell) => {
      const x = ((cell % nx) + 0.5) / nx;
      const y = (Math.floor(cell / nx) + 0.5) / ny;
      expect(Math.abs((p ?? -1) - truth(x, y)), `cell ${cell}`).toBeLessThan(0.15);
    });
  });

  it('has standard errors that match the spread of the estimate over repeated experiments', () => {
    // Monte Carlo check of the sandwich variance (common practice, no source):
    // 300 experiments at the same 400 locations, 4 fresh trials each; the
    // standard deviation of the fitted logit at one query point against the
    // root mean square of the reported standard errors. Sampling error of
    // the standard deviation is about 4%; 15% is allowed.
    const rng = createRandom(3, 'sandwich-check');
    const locations = Array.from({ length: 400 }, () => [rng.uniform(), rng.uniform()] as const);
    const logits: number[] = [];
    const squaredSe: number[] = [];
    for (let r = 0; r < 300; r++) {
      const experiment = locations.map(([x, y]) => {
        let successes = 0;
        for (let t = 0; t < 4; t++) if (rng.uniform() < truth(x, y)) successes += 1;
        return { x, y, trials: 4, successes };
      });
      const [at] = estimateAt(prepareSmoothingData(experiment), 0.15, [{ x: 0.9, y: 0.9 }]);
      if (at?.ok && at.logit !== null && at.seLogit !== null) {
        logits.push(at.logit);
        squaredSe.push(at.seLogit * at.seLogit);
      }
    }
    expect(logits.length).toBe(300);
    const mean = logits.reduce((a, b) => a + b, 0) / logits.length;
    const sd = Math.sqrt(logits.reduce((a, b) => a + (b - mean) ** 2, 0) / (logits.length - 1));
    const rmsSe = Math.sqrt(squaredSe.reduce((a, b) => a + b, 0) / squaredSe.length);
    expect(sd / rmsSe).toBeGreaterThan(0.85);
    expect(sd / rmsSe).toBeLessThan(1.15);
  });

  it('uses the local logistic fit wherever the true probability is between 1% and 99%', () => {
    // Falling back is for (nearly) separated data, which only the saturated corners come close to.
    expect(field.ok).toBe(true);
    if (!field.ok) return;
    field.estimates.forEach((e, cell) => {
      const p = truth(((cell % nx) + 0.5) / nx, (Math.floor(cell / nx) + 0.5) / ny);
      if (p > 0.01 && p < 0.99) expect(e.ok && e.method, `cell ${cell}`).toBe('local-linear');
    });
  });

  it('gives the same field whether replicates are listed one by one or pooled', () => {
    const few = sampled(40, 2, truth, 11);
    const split = few.flatMap((p) => [
      { ...p, trials: 1, successes: Math.min(1, p.successes) },
      { ...p, trials: 1, successes: p.successes - Math.min(1, p.successes) },
    ]);
    const a = smoothSuccessField(few, { nx: 5, ny: 5, bandwidth: 0.2 });
    const b = smoothSuccessField(split, { nx: 5, ny: 5, bandwidth: 0.2 });
    expect(a.ok && b.ok).toBe(true);
    if (!a.ok || !b.ok) return;
    expect(b.counts).toEqual(a.counts);
    a.p.forEach((p, i) => {
      expect(Math.abs((p ?? 0) - (b.p[i] ?? 0))).toBeLessThan(1e-12);
    });
  });

  it('leaves cells far from every point without an estimate and says why', () => {
    // Twelve points packed into the lower-left corner; a small bandwidth cannot reach the far corner.
    const corner = lattice(12, 4, (x) => (x < 0.5 ? 1 : 3)).map((p) => ({ ...p, x: p.x / 5, y: p.y / 5 }));
    const result = smoothSuccessField(corner, { nx: 10, ny: 10, bandwidth: 0.02 });
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    expect(result.curve).toEqual([]);
    expect(result.p[99]).toBeNull();
    const far = result.estimates[99];
    expect(far?.ok === false && far.reason).toBe(NO_POINT_IN_REACH);
  });

  it('falls back to local constant where the points lie on one line', () => {
    // Every point on the diagonal y = x: the local design has rank 2, a plane cannot be fitted.
    const diagonal = Array.from({ length: 20 }, (_, i) => {
      const t = (i + 0.5) / 20;
      return { x: t, y: t, trials: 5, successes: i % 5 };
    });
    const [at] = estimateAt(prepareSmoothingData(diagonal), 0.3, [{ x: 0.5, y: 0.5 }]);
    expect(at?.ok && at.method).toBe('local-constant');
    expect(at?.ok && at.fallback).toBe('collinear-points');
    // A weighted mean of rates 0 ... 0.8 around a symmetric design: near their mean 0.4.
    expect(at?.ok && Math.abs(at.p - 0.4)).toBeLessThan(0.02);
  });
});

describe('wilsonEffective', () => {
  // With a whole number of trials it is the Wilson score interval: Newcombe
  // (1998, Stat Med 17:857-872), Table I, method 3.
  it('gives Newcombe’s intervals for whole numbers of trials', () => {
    const a = wilsonEffective(81 / 263, 263);
    expect(Number(a.lo.toFixed(4))).toBe(0.2553);
    expect(Number(a.hi.toFixed(4))).toBe(0.3662);
    const b = wilsonEffective(0, 20);
    expect(b.lo).toBe(0);
    expect(Number(b.hi.toFixed(4))).toBe(0.1611);
  });
});

describe('leftOutLocations', () => {
  it('leaves out every location up to the limit', () => {
    expect([...leftOutLocations(5, 10)]).toEqual([0, 1, 2, 3, 4]);
  });

  it('leaves out an evenly strided subset beyond it', () => {
    const chosen = [...leftOutLocations(2500, 1000)];
    expect(chosen.length).toBe(1000);
    expect(new Set(chosen).size).toBe(1000);
    expect(chosen[0]).toBe(0);
    expect(chosen[999]).toBe(2497);
    for (let i = 1; i < chosen.length; i++) expect((chosen[i] ?? 0) - (chosen[i - 1] ?? 0)).toBeGreaterThanOrEqual(2);
  });
});

describe('unitCoordinate', () => {
  it('maps a range linearly onto [0, 1]', () => {
    expect(unitCoordinate(1.375, 0.5, 4, false)).toBeCloseTo(0.25, 15);
  });

  it('maps a log-scaled range in log space: the geometric mean is the middle', () => {
    expect(unitCoordinate(Math.sqrt(20 * 200), 20, 200, true)).toBeCloseTo(0.5, 14);
  });

  it('clamps values a rounding error outside the range', () => {
    expect(unitCoordinate(200.0000001, 20, 200, true)).toBe(1);
    expect(() => unitCoordinate(1, 0, 10, true)).toThrow(/positive bounds/);
  });
});
