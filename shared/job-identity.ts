import { canonicalJson, sha256Hex } from './canonical-json.js';
import { deriveSeed } from './random.js';

/**
 * The text a job key hashes, up to its replicate number: the canonical JSON
 * of `{ model, modelVersion, params, replicate }` cut before the replicate
 * (canonical order sorts those four names exactly so). Built once per
 * parameter point, it serves every replicate of the point.
 */
export function jobKeyPrefix(model: string, modelVersion: string, params: Readonly<Record<string, unknown>>): string {
  return `{"model":${JSON.stringify(model)},"modelVersion":${JSON.stringify(modelVersion)},"params":${canonicalJson(params)},"replicate":`;
}

/** The job key of one replicate, from the point's jobKeyPrefix. */
export function jobKeyAt(prefix: string, replicate: number): string {
  return sha256Hex(`${prefix}${replicate}}`).slice(0, 32);
}

/**
 * Job key: 128 bits of SHA-256 over the model id, model version, the full
 * parameter set (defaults included) and the replicate number. Equal jobs get
 * equal keys on every machine, which is what makes resume and dedup work.
 * This is the one definition: planning, workers and readers all compute it here.
 */
export function jobKey(
  model: string,
  modelVersion: string,
  params: Readonly<Record<string, unknown>>,
  replicate: number,
): string {
  return jobKeyAt(jobKeyPrefix(model, modelVersion, params), replicate);
}

/** Per-job seed: derived from the sweep's root seed and the job key. */
export function jobSeed(rootSeed: number, key: string): number {
  return deriveSeed(rootSeed, key);
}

/** What a job or record claims about itself. */
export interface ClaimedIdentity {
  readonly key: string;
  readonly model: string;
  readonly modelVersion: string;
  readonly replicate: number;
  readonly seed: number;
  readonly point: Readonly<Record<string, unknown>>;
}

/**
 * Why a job's key, seed or point is not what its content gives, or undefined
 * when they agree. `params` are the parameters the model will run with (or
 * ran with), `rootSeed` the sweep's root seed. The point must be a part of
 * the parameters, value for value: it is what reports group by.
 */
export function identityProblem(
  claimed: ClaimedIdentity,
  params: Readonly<Record<string, unknown>>,
  rootSeed: number,
  prefix: string = jobKeyPrefix(claimed.model, claimed.modelVersion, params),
): string | undefined {
  for (const [name, value] of Object.entries(claimed.point)) {
    if (!Object.hasOwn(params, name) || params[name] !== value) {
      return `point.${name} is ${JSON.stringify(value)} but the parameters give ${JSON.stringify(params[name] ?? null)}`;
    }
  }
  const key = jobKeyAt(prefix, claimed.replicate);
  if (key !== claimed.key) {
    return `key ${claimed.key} is not the key of its model, version, parameters and replicate (${key})`;
  }
  const seed = jobSeed(rootSeed, key);
  if (seed !== claimed.seed) return `seed ${claimed.seed} is not the seed of job ${key} (${seed})`;
  return undefined;
}
