import { latinHypercubeUnitPoints } from './latin-hypercube.js';
import { randomUnitPoints } from './random.js';
import { sobolUnitPoints } from './sobol.js';

export { gridIndices, gridSize } from './grid.js';
export { latinHypercubeUnitPoints } from './latin-hypercube.js';
export { randomUnitPoints } from './random.js';
export { sobolUnitPoints } from './sobol.js';
export { SOBOL_MAX_DIMENSIONS } from './sobol-directions.js';

/** The samplers that draw points in the unit cube (grid works on value lists). */
export type UnitSamplerKind = 'random' | 'lhs' | 'sobol';

/** Points in [0, 1)^dimensions from the named sampler, lazily. */
export function unitPoints(
  kind: UnitSamplerKind,
  count: number,
  dimensions: number,
  seed: number,
): Generator<number[]> {
  switch (kind) {
    case 'random':
      return randomUnitPoints(count, dimensions, seed);
    case 'lhs':
      return latinHypercubeUnitPoints(count, dimensions, seed);
    case 'sobol':
      return sobolUnitPoints(count, dimensions);
  }
}
