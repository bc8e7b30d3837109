import { canonicalJson, sha256Hex } from './canonical-json.js';
import { deriveSeed } from './random.js';

/**
 * Job key: 128 bits of SHA-256 over the model id, model version, the full
 * parameter set (defaults included) and the replicate number. Equal jobs get
 * equal keys on every machine, which is what makes resume and dedup work.
 */
export function jobKey(
  model: string,
  modelVersion: string,
  params: Readonly<Record<string, unknown>>,
  replicate: number,
): string {
  return sha256Hex(canonicalJson({ model, modelVersion, params, replicate })).slice(0, 32);
}

/** Per-job seed: derived from the sweep's root seed and the job key. */
export function jobSeed(rootSeed: number, key: string): number {
  return deriveSeed(rootSeed, key);
}
