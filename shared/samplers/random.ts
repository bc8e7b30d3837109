import { createRandom } from '../random.js';
import type { DrawingSampler } from './sampler.js';

/**
 * Independent uniform draws in the unit cube. Point i uses draws
 * i*d .. i*d+d-1 of one stream, so asking for more points keeps the earlier
 * ones (prefix property): a sweep can be extended without moving its points.
 */
export function* randomUnitPoints(count: number, dimensions: number, seed: number): Generator<number[]> {
  const rng = createRandom(seed, 'sampler');
  for (let i = 0; i < count; i++) {
    const point = new Array<number>(dimensions);
    for (let d = 0; d < dimensions; d++) point[d] = rng.uniform();
    yield point;
  }
}

export const randomSampler = {
  kind: 'random',
  help: 'Independent uniform draws; asking for more points keeps the earlier ones',
  ranges: ['between', 'among', 'list'],
  needsPoints: true,
  maxDimensions: Number.POSITIVE_INFINITY,
  unitPoints: randomUnitPoints,
} as const satisfies DrawingSampler;
