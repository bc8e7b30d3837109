import { identityProblem, jobKeyPrefix } from '../job-identity.js';
import type { ResultRecord } from '../schemas/records.js';
import { resolveParams } from '../sweep/expand.js';
import type { LoadedSweep } from '../sweep/load.js';

/** Why a stored record is not the sweep's job it claims to be, or undefined when it is. */
export type RecordCheck = (record: ResultRecord) => string | undefined;

/**
 * Points whose key text is remembered. Replicates of a point are written
 * close together, so a small cache saves nearly every parameter resolution;
 * it is emptied when full, which bounds memory on any number of points.
 */
const POINT_CACHE = 20_000;

/**
 * The reader's identity check: a record's key and seed must be what the
 * sweep gives for the record's point and replicate (model defaults + fixed +
 * point + computed parameters through the model's schema, as planning makes
 * them; job-identity.ts holds the one definition), its point must name
 * exactly the varied parameters, and its model and version must be the
 * sweep's. Per record this is one SHA-256 for the key and one for the seed;
 * a point's parameters are resolved once per point while it stays cached.
 */
export function recordIdentityCheck(sweep: LoadedSweep): RecordCheck {
  const { model, spec } = sweep;
  const names = new Set(sweep.variedNames);
  // Adaptive sweeps add replicates beyond `replicates` (up to refine.replicates.max).
  const maxReplicates =
    spec.refine === undefined ? spec.replicates : Math.max(spec.replicates, spec.refine.replicates.max);
  // Without computed parameters a valid point's parameters are the sweep's base (model
  // defaults + fixed, validated when the sweep loaded) with the point's values over them:
  // what the model's schema gives, at a small part of its cost (schemas check, they do
  // not transform). A point the schema would refuse never reaches a shard through a
  // worker, which validates before it runs.
  const paramsOf = (point: ResultRecord['point']): Record<string, unknown> | undefined =>
    sweep.derived === undefined ? { ...sweep.baseParams, ...point } : resolveParams(sweep, point);
  const cache = new Map<string, { readonly params: Record<string, unknown>; readonly prefix: string } | null>();
  return (record) => {
    if (record.model !== model.id || record.modelVersion !== model.version) {
      return `model ${record.model} ${record.modelVersion} is not the sweep's (${model.id} ${model.version})`;
    }
    if (record.replicate >= maxReplicates)
      return `replicate ${record.replicate} is beyond the sweep's ${maxReplicates}`;
    const given = Object.keys(record.point);
    if (given.length !== names.size || !given.every((n) => names.has(n))) {
      return `point names ${JSON.stringify(given)} are not the varied parameters ${JSON.stringify([...names])}`;
    }
    const text = JSON.stringify(record.point);
    let entry = cache.get(text);
    if (entry === undefined) {
      const params = paramsOf(record.point);
      entry = params === undefined ? null : { params, prefix: jobKeyPrefix(model.id, model.version, params) };
      if (cache.size >= POINT_CACHE) cache.clear();
      cache.set(text, entry);
    }
    if (entry === null) return `the model refuses point ${text}, so no job of it can have a result`;
    return identityProblem(record, entry.params, spec.seed, entry.prefix);
  };
}
