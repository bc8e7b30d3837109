import { type BcpnnParams, resolveShape } from './params.js';

/**
 * Estimated arithmetic operations of one trial, following what the fast path
 * does (docs/performance.md): training evolves nP x nP pattern coefficients
 * once per constant segment; recall costs O(N) per step for the support,
 * softmax (one exp per unit, counted as 20 operations) and adaptation, plus
 * O(G^2) for the class product, plus a normal draw per unit per step when
 * noise > 0 (counted as 30 operations).
 */
export function estimateCost(p: BcpnnParams): number {
  const s = resolveShape(p);
  const nP = Math.min(s.K * s.L, 256);
  const segments = p.epochs * s.K * (s.L * 2 + 1);
  const scalarSteps = p.epochs * s.K * (s.L * (s.nPattern + s.nGap) + s.nRest);
  // Classes: one per distinct pattern and per shared unit, plus the unused units.
  const G = Math.min(s.N, nP * 2 + 1);
  const training = segments * 4 * nP * nP + scalarSteps * 20 + s.N * nP + G * G * 30;
  const perStep = s.N * (12 + 20 + (p.noise > 0 ? 30 : 0)) + 2 * G * G + nP * (s.H + 2);
  const recall = s.K * (s.nCue + s.nFree) * perStep;
  return Math.round(training + recall);
}
