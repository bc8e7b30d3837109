import type { MetricInfo } from '../../model.js';

/** What each metric of a trial means (docs/model.md, "Decoding and scoring"). */
export const metricInfo: Readonly<Record<string, MetricInfo>> = {
  success: {
    type: 'boolean',
    description:
      'every stored sequence replayed in order: cued with its first pattern, the network visited the sequence’s patterns in the stored order (runs shorter than minDwell ignored), and no recall diverged',
  },
  recalledFraction: {
    type: 'number',
    unit: 'fraction of sequences',
    description: 'sequences replayed in order, divided by sequenceCount',
  },
  meanCorrectPrefix: {
    type: 'number',
    unit: 'positions',
    description: 'mean over sequences of the number of leading positions recalled correctly',
  },
  meanDwellMs: {
    type: 'number',
    unit: 'ms',
    description:
      'mean time a pattern stayed active within the correctly recalled part of each sequence; empty when none was (with stopWhenDecided, the last pattern of a recalled sequence counts only until it had lasted minDwell)',
  },
  achievedOverlap: {
    type: 'number',
    unit: 'fraction of hypercolumns',
    description:
      'mean overlap of the overlapped pattern pairs actually drawn (sequence 0 against every other sequence at the overlapped positions); empty without overlap',
  },
  diverged: { type: 'boolean', description: 'the network state stopped being finite in some recall' },
  distinctPatterns: {
    type: 'integer',
    unit: 'patterns',
    description: 'number of distinct stored patterns (shared patterns count once)',
  },
  correctPrefix: {
    type: 'numbers',
    unit: 'positions',
    description: 'per sequence: leading positions recalled correctly',
  },
  firstError: {
    type: 'numbers',
    unit: 'position',
    description: 'per sequence: the first wrong or missing position; empty when the whole sequence was recalled',
  },
};
