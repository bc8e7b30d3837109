import { describe, expect, it } from 'vitest';
import { gridIndices } from '../../shared/samplers/grid.js';
import { latinHypercubeUnitPoints } from '../../shared/samplers/latin-hypercube.js';
import { randomUnitPoints } from '../../shared/samplers/random.js';
import { sobolUnitPoints } from '../../shared/samplers/sobol.js';

describe('Sobol sampler', () => {
  it('gives the first 8 unscrambled points in 3 dimensions, starting at the zero point', () => {
    // Source: SciPy 1.17 qmc.Sobol(d=3, scramble=False).random(8), which uses
    // the Joe & Kuo (2008) direction numbers.
    const expected = [
      [0, 0, 0],
      [0.5, 0.5, 0.5],
      [0.75, 0.25, 0.25],
      [0.25, 0.75, 0.75],
      [0.375, 0.375, 0.625],
      [0.875, 0.875, 0.125],
      [0.625, 0.125, 0.875],
      [0.125, 0.625, 0.375],
    ];
    expect([...sobolUnitPoints(8, 3)]).toEqual(expected);
  });

  it('matches SciPy in high dimensions far into the sequence', () => {
    // Source: SciPy 1.17.1 qmc.Sobol(d=40, scramble=False).random(1024), rows
    // 100, 511, 777, 1023, dimensions 7, 14, 21, 28, 34, 40 (Joe & Kuo 2008 table).
    const dims = [7, 14, 21, 28, 34, 40];
    const expected: Record<number, number[]> = {
      100: [0.0234375, 0.8515625, 0.7578125, 0.6640625, 0.2578125, 0.1328125],
      511: [0.744140625, 0.943359375, 0.662109375, 0.212890625, 0.740234375, 0.236328125],
      777: [0.1904296875, 0.4736328125, 0.2373046875, 0.7802734375, 0.0029296875, 0.3583984375],
      1023: [0.1396484375, 0.6650390625, 0.8662109375, 0.7607421875, 0.8740234375, 0.6982421875],
    };
    const points = [...sobolUnitPoints(1024, 40)];
    for (const [row, values] of Object.entries(expected)) {
      const point = points[Number(row)]!;
      expect(dims.map((d) => point[d - 1])).toEqual(values);
    }
  });

  it('makes dimension 1 the van der Corput sequence: 16 points are the k/16 in Gray-code bit-reversed order', () => {
    // Common practice, no source: the first Sobol coordinate is the base-2
    // radical inverse; in Gray-code order point i is the radical inverse of i XOR (i >> 1).
    const reversed = (n: number, bits: number): number => {
      let r = 0;
      for (let b = 0; b < bits; b++) if ((n >> b) & 1) r |= 1 << (bits - 1 - b);
      return r;
    };
    const first = [...sobolUnitPoints(16, 1)].map((p) => p[0]!);
    expect(first).toEqual(Array.from({ length: 16 }, (_, i) => reversed(i ^ (i >> 1), 4) / 16));
    expect([...first].sort((a, b) => a - b)).toEqual(Array.from({ length: 16 }, (_, k) => k / 16));
  });

  it('keeps earlier points when more are asked for', () => {
    const short = [...sobolUnitPoints(10, 5)];
    const long = [...sobolUnitPoints(100, 5)];
    expect(long.slice(0, 10)).toEqual(short);
  });

  it('refuses more dimensions than it has direction numbers for', () => {
    expect(() => [...sobolUnitPoints(2, 41)]).toThrow(/at most 40 dimensions/);
  });
});

describe('Latin hypercube sampler', () => {
  it('puts exactly one point in each of the n equal strata of every dimension', () => {
    // McKay, Beckman & Conover (1979): the defining property of a Latin hypercube sample.
    for (const n of [1, 7, 50, 256]) {
      for (const d of [1, 3, 6]) {
        const points = [...latinHypercubeUnitPoints(n, d, 11 + n + d)];
        expect(points).toHaveLength(n);
        for (let dim = 0; dim < d; dim++) {
          const strata = points.map((p) => Math.floor(p[dim]! * n)).sort((a, b) => a - b);
          expect(strata).toEqual(Array.from({ length: n }, (_, k) => k));
          for (const p of points) expect(p[dim]!).toBeGreaterThanOrEqual(0);
          for (const p of points) expect(p[dim]!).toBeLessThan(1);
        }
      }
    }
  });

  it('is the same for the same seed and different for another seed', () => {
    const a = [...latinHypercubeUnitPoints(20, 3, 5)];
    expect([...latinHypercubeUnitPoints(20, 3, 5)]).toEqual(a);
    expect([...latinHypercubeUnitPoints(20, 3, 6)]).not.toEqual(a);
  });
});

describe('random sampler', () => {
  it('keeps earlier points when more are asked for', () => {
    const short = [...randomUnitPoints(7, 3, 42)];
    expect([...randomUnitPoints(70, 3, 42)].slice(0, 7)).toEqual(short);
  });
});

describe('grid indices', () => {
  it('list the full product with the first dimension slowest', () => {
    expect([...gridIndices([2, 3])]).toEqual([
      [0, 0],
      [0, 1],
      [0, 2],
      [1, 0],
      [1, 1],
      [1, 2],
    ]);
    expect([...gridIndices([])]).toEqual([[]]);
  });
});
