import { wilsonInterval } from '../wilson.js';
import { twoSidedZ } from './normal-quantile.js';
import type { RefineSettings } from './schema.js';

/**
 * Replicate counts a point passes through: start, then doubling, capped at
 * max (8, 16, 32, 64 for start 8 and max 64; 5, 10, 12 for start 5, max 12).
 */
export function batchSizes(replicates: { readonly start: number; readonly max: number }): number[] {
  const sizes = [replicates.start];
  while (sizes[sizes.length - 1]! < replicates.max) sizes.push(Math.min(replicates.max, sizes[sizes.length - 1]! * 2));
  return sizes;
}

/**
 * Confidence of each look's interval. A point is looked at after every batch
 * and stops at the first look whose interval excludes the level; testing
 * repeatedly at the nominal level raises the chance of a wrong stop well
 * above 1 - confidence (Armitage, McPherson & Rowe 1969). Splitting the
 * error over the looks (Bonferroni) keeps the chance that any look excludes
 * a true rate equal to the level at most 1 - confidence: conservative, and
 * simple to state (Jennison & Turnbull 2000 discuss sharper boundaries).
 */
export function stopConfidence(settings: Pick<RefineSettings, 'confidence' | 'replicates'>): number {
  const looks = batchSizes(settings.replicates).length;
  return 1 - (1 - settings.confidence) / looks;
}

/** One trial's outcome for the metric: true/false, or null when its value is not 0/1 (not counted). */
export type TrialOutcome = boolean | null;

export type PointState =
  /** Waiting for results of replicates 0..replicates-1. */
  | { readonly kind: 'running'; readonly replicates: number }
  /** The interval at the stopping confidence lies wholly above or below the level. */
  | {
      readonly kind: 'above' | 'below';
      readonly replicates: number;
      readonly successes: number;
      readonly counted: number;
    }
  /** Reached max replicates with the level still inside the interval. */
  | { readonly kind: 'undecided'; readonly replicates: number; readonly successes: number; readonly counted: number };

/**
 * Where a point stands, from the outcomes of its replicates (undefined: no
 * result yet). Only replicates below the current batch size are looked at,
 * so the state depends on the results alone, never on the order they came in.
 */
export function pointState(
  settings: Pick<RefineSettings, 'confidence' | 'replicates' | 'level'>,
  outcome: (replicate: number) => TrialOutcome | undefined,
): PointState {
  const z = twoSidedZ(stopConfidence(settings));
  let successes = 0;
  let counted = 0;
  let seen = 0;
  for (const size of batchSizes(settings.replicates)) {
    for (; seen < size; seen++) {
      const o = outcome(seen);
      if (o === undefined) return { kind: 'running', replicates: size };
      if (o === null) continue;
      counted++;
      if (o) successes++;
    }
    const interval = wilsonInterval(successes, counted, z);
    if (interval !== null && interval.lo > settings.level)
      return { kind: 'above', replicates: size, successes, counted };
    if (interval !== null && interval.hi < settings.level)
      return { kind: 'below', replicates: size, successes, counted };
  }
  return { kind: 'undecided', replicates: settings.replicates.max, successes, counted };
}
