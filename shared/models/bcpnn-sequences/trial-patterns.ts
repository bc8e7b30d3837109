import { createRandom } from '../../random.js';
import { type BcpnnParams, resolveShape } from './params.js';
import { generateSequences, indexPatterns, type PatternSet } from './patterns.js';

/** The stored sequences of a trial: explicit, or drawn from the 'patterns' stream. */
export function makePatternSet(p: BcpnnParams, seed: number): PatternSet {
  const shape = resolveShape(p);
  if (p.sequences !== undefined) return indexPatterns(p.sequences);
  const rng = createRandom(seed, 'patterns');
  return generateSequences(
    { H: shape.H, M: shape.M, K: shape.K, L: shape.L, f: p.patternOverlap, k: shape.k, start: shape.start },
    rng,
  );
}
