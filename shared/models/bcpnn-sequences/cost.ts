import { type BcpnnParams, type ResolvedShape, resolveShape } from './params.js';
import { sharedLayoutSize } from './recall-layout.js';
import { makePatternSet } from './trial-patterns.js';

/** Units a noise-free recall updates, by pattern shape: every job of a point asks again (time limits, plans). */
const quietUnitsByShape = new Map<string, number>();
const QUIET_UNITS_CACHE = 1024;

function quietUnits(p: BcpnnParams, s: ResolvedShape): number {
  const key =
    p.sequences === undefined
      ? `${s.H} ${s.M} ${s.K} ${s.L} ${p.patternOverlap} ${s.k} ${s.start}`
      : JSON.stringify(p.sequences);
  let units = quietUnitsByShape.get(key);
  if (units === undefined) {
    units = sharedLayoutSize(makePatternSet(p, 0), s);
    if (quietUnitsByShape.size >= QUIET_UNITS_CACHE) quietUnitsByShape.clear();
    quietUnitsByShape.set(key, units);
  }
  return units;
}

/**
 * Estimated arithmetic operations of one trial, following what the fast path
 * does (docs/performance.md): training evolves nP x nP pattern coefficients
 * once per constant segment; recall costs O(N) per step for the support,
 * softmax (one exp per unit, counted as 20 operations) and adaptation, plus
 * O(G^2) for the class product, plus a normal draw per unit per step when
 * noise > 0 (counted as 30 operations). Without noise recall updates one unit
 * per class of each kind of hypercolumn (recall-layout.ts); how many, the
 * patterns of seed 0 tell (other seeds give the same count, or up to about
 * half or twice it where overlaps fall on different hypercolumns).
 */
export function estimateCost(p: BcpnnParams): number {
  const s = resolveShape(p);
  const nP = Math.min(s.K * s.L, 256);
  const segments = p.epochs * s.K * (s.L * 2 + 1);
  const scalarSteps = p.epochs * s.K * (s.L * (s.nPattern + s.nGap) + s.nRest);
  // Classes: one per distinct pattern and per shared unit, plus the unused units.
  const G = Math.min(s.N, nP * 2 + 1);
  const training = segments * 4 * nP * nP + scalarSteps * 20 + s.N * nP + G * G * 30;
  const units = p.noise > 0 ? s.N : quietUnits(p, s);
  const perStep = units * (12 + 20 + (p.noise > 0 ? 30 : 0)) + 2 * G * G + nP * (s.H + 2);
  const recall = s.K * (s.nCue + s.nFree) * perStep;
  return Math.round(training + recall);
}
