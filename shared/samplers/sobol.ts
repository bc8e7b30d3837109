import type { DrawingSampler } from './sampler.js';
import { JOE_KUO_ROWS, SOBOL_MAX_DIMENSIONS } from './sobol-directions.js';

const BITS = 32;
const SCALE = 2 ** BITS;

/** Direction integers v_1..v_32 of one dimension, scaled to 32 bits. */
function directionIntegers(dimension: number): Uint32Array {
  const v = new Uint32Array(BITS + 1);
  if (dimension === 0) {
    // van der Corput: every m_k = 1.
    for (let k = 1; k <= BITS; k++) v[k] = 2 ** (BITS - k);
    return v;
  }
  const row = JOE_KUO_ROWS[dimension - 1];
  if (row === undefined) throw new RangeError(`no direction numbers for dimension ${dimension + 1}`);
  const [s, a, m] = row;
  for (let k = 1; k <= Math.min(s, BITS); k++) v[k] = ((m[k - 1] ?? 1) * 2 ** (BITS - k)) >>> 0;
  // Recurrence of Bratley & Fox (1988) as used by Joe & Kuo (2008).
  for (let k = s + 1; k <= BITS; k++) {
    let value = (v[k - s]! ^ (v[k - s]! >>> s)) >>> 0;
    for (let l = 1; l < s; l++) {
      if (((a >>> (s - 1 - l)) & 1) === 1) value = (value ^ v[k - l]!) >>> 0;
    }
    v[k] = value;
  }
  return v;
}

/**
 * Unscrambled Sobol points in Gray-code order, starting with the all-zero
 * point (it is not skipped). Deterministic and seed-free; prefix property.
 * Balance is best when `count` is a power of two.
 */
export function* sobolUnitPoints(count: number, dimensions: number): Generator<number[]> {
  if (dimensions > SOBOL_MAX_DIMENSIONS) {
    throw new RangeError(`the Sobol sampler supports at most ${SOBOL_MAX_DIMENSIONS} dimensions, got ${dimensions}`);
  }
  if (count > 2 ** BITS - 1) throw new RangeError(`the Sobol sampler gives at most 2^32 - 1 points`);
  const directions = Array.from({ length: dimensions }, (_, d) => directionIntegers(d));
  const x = new Uint32Array(dimensions);
  for (let i = 0; i < count; i++) {
    yield Array.from(x, (value) => value / SCALE);
    // Next Gray-code point: flip the direction of the lowest zero bit of i.
    let c = 1;
    let n = i;
    while ((n & 1) === 1) {
      n = Math.floor(n / 2);
      c++;
    }
    for (let d = 0; d < dimensions; d++) x[d] = (x[d]! ^ directions[d]![c]!) >>> 0;
  }
}

export const sobolSampler = {
  kind: 'sobol',
  help: `Unscrambled Sobol sequence from the all-zero point (Joe & Kuo 2008), at most ${SOBOL_MAX_DIMENSIONS} varied parameters; seed-free`,
  ranges: ['between', 'among', 'list'],
  needsPoints: true,
  maxDimensions: SOBOL_MAX_DIMENSIONS,
  unitPoints: (count: number, dimensions: number) => sobolUnitPoints(count, dimensions),
} as const satisfies DrawingSampler;
