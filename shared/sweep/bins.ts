import { z } from 'zod';

/** Bins per axis of a sampled sweep's report: the one definition for the sweep file and `report --bins`. */
export const MIN_BINS = 2;
export const MAX_BINS = 200;
export const BINS_RULE = `a whole number from ${MIN_BINS} to ${MAX_BINS}`;

export const BinsSchema = z
  .number({ error: `bins must be ${BINS_RULE}` })
  .int(`bins must be ${BINS_RULE}`)
  .min(MIN_BINS, `bins must be ${BINS_RULE}`)
  .max(MAX_BINS, `bins must be ${BINS_RULE}`);
