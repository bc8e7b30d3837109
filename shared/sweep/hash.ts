import { canonicalJson, sha256Hex } from '../canonical-json.js';
import type { AnyModel } from '../model.js';
import { samplerFor } from '../samplers/index.js';
import type { SweepSpec } from './schema.js';

export const SWEEP_FORMAT = 'recallscape-sweep/1';

/**
 * The sweep hash covers everything that decides which jobs exist and what
 * they compute: name, model id and version, seed, replicates, the base
 * parameters (model defaults + fixed, as validated: writing a default into
 * `fixed` changes no job, so it changes no hash), vary, sampler and refine; not
 * `report`, which only changes how results are drawn. Drawn sweeps also
 * hash the order of the varied parameters, because it assigns the sampler's
 * dimensions; a product (grid) sweep's job set does not depend on that order.
 * Computed parameters enter as their normalised formulas (printFormula), so
 * spacing and redundant parentheses do not change the hash; a sweep without
 * any keeps the hash it had before the section existed.
 */
export function sweepHash(
  spec: SweepSpec,
  model: AnyModel,
  baseParams: Readonly<Record<string, unknown>>,
  derived: Readonly<Record<string, string>> = {},
): string {
  const order = samplerFor(spec.sampler.kind).needsPoints ? Object.keys(spec.vary) : undefined;
  return sha256Hex(
    canonicalJson({
      format: SWEEP_FORMAT,
      name: spec.name,
      model: model.id,
      modelVersion: model.version,
      seed: spec.seed,
      replicates: spec.replicates,
      base: baseParams,
      vary: spec.vary,
      derived: Object.keys(derived).length > 0 ? derived : undefined,
      sampler: spec.sampler,
      order,
      // Absent for plain sweeps, so their hashes are unchanged.
      refine: spec.refine,
    }),
  );
}
