import { bcpnnSequences, trainTrial } from '../../shared/models/bcpnn-sequences/index.js';
import type { BcpnnParams } from '../../shared/models/bcpnn-sequences/params.js';
import { activeAt } from '../../shared/models/bcpnn-sequences/scoring.js';
import { classJoint, type TrainedNetwork } from '../../shared/models/bcpnn-sequences/training.js';
import type { ReferenceConfig } from './reference-model.js';

/** Validated parameters; throws with the zod message if the test itself is wrong. */
export function params(input: Record<string, unknown>): BcpnnParams {
  return bcpnnSequences.params.parse(input);
}

/** Dense pJoint of the fast network (class values spread over units). */
export function densePJoint(net: TrainedNetwork): Float64Array {
  const out = new Float64Array(net.N * net.N);
  for (let i = 0; i < net.N; i++) {
    for (let j = 0; j < net.N; j++) out[i * net.N + j] = classJoint(net, net.classOf[i]!, net.classOf[j]!);
  }
  return out;
}

/** The reference configuration equal to validated parameters and a pattern set. */
export function referenceConfig(p: BcpnnParams, sequences: ReferenceConfig['sequences']): ReferenceConfig {
  return {
    H: sequences[0]![0]!.length,
    M: p.minicolumns,
    sequences,
    dt: p.dt,
    tauZPre: p.tauZPre,
    tauZPost: p.tauZPost,
    tauP: p.tauP,
    eps: p.eps,
    epochs: p.epochs,
    patternDuration: p.patternDuration,
    gapDuration: p.gapDuration,
    restDuration: p.restDuration,
    tauSupport: p.tauSupport,
    tauAdapt: p.tauAdapt,
    adaptGain: p.adaptGain,
    gain: p.gain,
    weightGain: p.weightGain,
    biasGain: p.biasGain,
    cueDuration: p.cueDuration,
    cueStrength: p.cueStrength,
    recallDuration: p.recallDuration,
    matchThreshold: p.matchThreshold,
    minDwell: p.minDwell,
  };
}

export { trainTrial };

/** Largest |a - b| / max(1, |b|) over two arrays of equal length. */
export function maxRelativeError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  if (a.length !== b.length) throw new Error(`length ${a.length} != ${b.length}`);
  let worst = 0;
  for (let i = 0; i < a.length; i++) worst = Math.max(worst, Math.abs(a[i]! - b[i]!) / Math.max(1, Math.abs(b[i]!)));
  return worst;
}

export function maxAbsError(a: ArrayLike<number>, b: ArrayLike<number>): number {
  if (a.length !== b.length) throw new Error(`length ${a.length} != ${b.length}`);
  let worst = 0;
  for (let i = 0; i < a.length; i++) {
    const d = Math.abs(a[i]! - b[i]!);
    worst = Number.isNaN(d) ? Infinity : Math.max(worst, d);
  }
  return worst;
}

/**
 * Active ids of every step of a row-major steps x nPatterns match table,
 * through the production per-step decoder `activeAt` (recall.ts calls it
 * once per step on that step's matches).
 */
export function activeFromMatches(matches: ArrayLike<number>, nPatterns: number, threshold: number): Int32Array {
  const steps = Math.floor(matches.length / nPatterns);
  const out = new Int32Array(steps);
  for (let t = 0; t < steps; t++) out[t] = activeAt(matches, t * nPatterns, nPatterns, threshold);
  return out;
}
