import { createRandom } from '../random.js';
import type { DrawingSampler } from './sampler.js';

/**
 * Latin hypercube sample (McKay, Beckman & Conover 1979): each dimension is cut
 * into `count` equal strata, every stratum holds exactly one point, strata are
 * paired across dimensions by an independent random permutation per
 * dimension, and each point sits at a uniform random position inside its
 * stratum. Unlike the other samplers there is no prefix property: the strata
 * depend on the number of points.
 */
export function* latinHypercubeUnitPoints(count: number, dimensions: number, seed: number): Generator<number[]> {
  const rng = createRandom(seed, 'sampler');
  const strata: Uint32Array[] = [];
  for (let d = 0; d < dimensions; d++) {
    const perm = new Uint32Array(count);
    for (let i = 0; i < count; i++) perm[i] = i;
    // Fisher-Yates shuffle.
    for (let i = count - 1; i > 0; i--) {
      const j = rng.int(i + 1);
      const t = perm[i] ?? 0;
      perm[i] = perm[j] ?? 0;
      perm[j] = t;
    }
    strata.push(perm);
  }
  // Positions inside the strata are drawn after all permutations, point by point.
  for (let i = 0; i < count; i++) {
    const point = new Array<number>(dimensions);
    for (let d = 0; d < dimensions; d++) {
      const u = ((strata[d]?.[i] ?? 0) + rng.uniform()) / count;
      // Guard against rounding up to the next stratum's edge at 1.
      point[d] = Math.min(u, 1 - Number.EPSILON);
    }
    yield point;
  }
}

export const latinHypercubeSampler = {
  kind: 'lhs',
  help: 'Latin hypercube: one point in each of N equal strata of every dimension',
  ranges: ['between', 'among', 'list'],
  needsPoints: true,
  maxDimensions: Number.POSITIVE_INFINITY,
  unitPoints: latinHypercubeUnitPoints,
} as const satisfies DrawingSampler;
